// Running the program and reference scripts from tests.
#include "test_support.hpp"

#include <sys/wait.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>

namespace orderband::test {
namespace {
std::string slurp(const std::string& path) {
  std::ifstream in(path);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

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
}  // namespace

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

}  // namespace orderband::test
