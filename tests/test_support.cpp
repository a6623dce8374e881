// Running the program and reference scripts from tests.
#include "test_support.hpp"

#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <thread>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>

#include "orderband/synth_scan.hpp"

namespace orderband::test {
namespace {
std::string slurp(const std::string& path) {
  std::ifstream in(path);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}
}  // namespace

RunResult run_command(const std::string& command) {
  const std::string dir = make_temp_dir("run");
  const std::string out = dir + "/stdout", err = dir + "/stderr";
  const std::string full = command + " >" + out + " 2>" + err;
  const int status = std::system(full.c_str());
  RunResult r;
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = slurp(out);
  r.err = slurp(err);
  std::filesystem::remove_all(dir);
  return r;
}

std::string make_temp_dir(const std::string& stem) {
  std::random_device rd;
  const auto base = std::filesystem::temp_directory_path();
  for (int attempt = 0; attempt < 100; ++attempt) {
    const auto p = base / ("orderband-test-" + stem + "-" + std::to_string(rd()));
    if (std::filesystem::create_directory(p)) return p.string();
  }
  return (base / ("orderband-test-" + stem)).string();
}

RunResult run_orderband(const std::string& args) { return run_command(std::string(ORDERBAND_BINARY) + " " + args); }

RunResult run_reference_script(const std::string& script, const std::string& args) {
  return run_command(std::string(ORDERBAND_PYTHON) + " " + ORDERBAND_REFERENCE_DIR + "/" + script + " " + args);
}

std::string write_small_scan(const std::string& dir, int side, int seed, const std::string& variant) {
  std::ofstream(dir + "/s.toml")
      << "[scenario]\nseed = " << seed << "\n[scan]\nrows = " << side << "\ncols = " << side
      << "\nstep_um = 0.03\n[detector]\nwidth_px = 48\nheight_px = 48\npc_px = [24.0, 15.0]\n"
         "distance_px = 36.0\n[patterns]\ncounts_per_px = 5000\n"
      << variant
      << "[grains]\ncount = 2\n"
         "[secondary]\narea_fraction = 0.3\ndistribution = \"lognormal\"\n"
         "median_diameter_um = 0.12\nsigma_ln = 0.2\n";
  write_synthetic_scan(read_synth_scenario(dir + "/s.toml"), dir + "/scan", "test");
  return dir + "/scan/scan.toml";
}

InterruptedRun interrupt_after_rows(const std::string& command, const std::string& folder, const std::string& stage,
                                    int rows, const std::function<bool(int pid)>& stop, int minutes) {
  InterruptedRun run;
  const pid_t pid = fork();
  if (pid < 0) return run;
  if (pid == 0) {
    execl("/bin/sh", "sh", "-c", ("exec " + command + " >/dev/null 2>&1").c_str(), static_cast<char*>(nullptr));
    _exit(127);
  }
  const auto give_up = std::chrono::steady_clock::now() + std::chrono::minutes(minutes);
  while (!run.stopped && !run.exited && std::chrono::steady_clock::now() < give_up) {
    std::this_thread::sleep_for(std::chrono::milliseconds(10));
    run.exited = waitpid(pid, &run.status, WNOHANG) == pid;
    int committed = 0;
    std::error_code ec;
    for (const auto& e : std::filesystem::directory_iterator(folder, ec))
      committed += e.path().filename().string().rfind(stage + "-", 0) == 0;
    if (!run.exited && committed >= rows) run.stopped = stop(pid);
  }
  if (!run.exited) {
    if (!run.stopped) kill(pid, SIGKILL);
    waitpid(pid, &run.status, 0);
  }
  return run;
}

std::string read_file_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

}  // namespace orderband::test
