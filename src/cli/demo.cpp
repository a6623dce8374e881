// `orderband demo [-o DIR]`: the demo trials, synthesised if needed, mapped and screened.
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <memory>

#include "command.hpp"
#include "orderband/error.hpp"
#include "screen_runner.hpp"

namespace fs = std::filesystem;

namespace orderband::cli {
namespace {
std::string demo_data_dir() {
  if (const char* env = std::getenv("ORDERBAND_DEMO_DATA"); env && *env) return env;
#ifdef ORDERBAND_SOURCE_DEMO_DIR
  if (fs::exists(fs::path(ORDERBAND_SOURCE_DEMO_DIR) / "trials.toml")) return ORDERBAND_SOURCE_DEMO_DIR;
#endif
  std::error_code ec;
  const fs::path exe = fs::read_symlink("/proc/self/exe", ec);
  const fs::path installed = exe.parent_path().parent_path() / "share" / "orderband" / "demo-data";
  if (!ec && fs::exists(installed / "trials.toml")) return installed.string();
  fail("cannot find the demo-data folder; set ORDERBAND_DEMO_DATA to its path");
}
}  // namespace

std::function<int()> setup_demo(CLI::App& sub) {
  struct Options {
    std::string out = "orderband-demo";
    int threads = 0;
    bool quiet = false;
  };
  auto o = std::make_shared<Options>();
  sub.add_option("-o,--output", o->out, "output folder")->capture_default_str();
  add_threads_option(sub, o->threads);
  sub.add_flag("--quiet", o->quiet, "no progress on stderr");
  sub.footer(
      "Synthesises the three demo ageing trials (invented alloy Veldite 5) into the cache folder\n"
      "($ORDERBAND_CACHE, else ~/.cache/orderband) if they are not there yet, maps each and screens them.");
  return [o]() {
    apply_threads(o->threads);
    const ScreenRun r = run_screen(demo_data_dir() + "/trials.toml", o->out, MapRunOptions{}, o->quiet);
    std::printf("demo report: %s\n", fs::absolute(r.report).lexically_normal().c_str());
    return r.failed.empty() ? 0 : 1;
  };
}

}  // namespace orderband::cli
