// `orderband screen TRIALS.toml -o OUT`: heat-treatment trials side by side, kinetics, ranking.
#include <cstdio>
#include <functional>
#include <memory>

#include "command.hpp"
#include "progress.hpp"
#include "screen_runner.hpp"

namespace orderband::cli {

ScreenRun run_screen(const std::string& trials_path, const std::string& out, const MapRunOptions& run, bool quiet) {
  StageBars bars("points", quiet), synthesis("patterns", quiet);
  ScreenProgress progress;
  progress.message = [&](const std::string& line) {
    bars.finish(), synthesis.finish();
    if (!quiet) std::fprintf(stderr, "%s\n", line.c_str());
  };
  progress.warning = [&](const std::string& line) {
    bars.finish(), synthesis.finish();
    std::fprintf(stderr, "orderband screen: %s\n", line.c_str());
  };
  progress.synthesis = [&](size_t done, size_t total) { synthesis("synth", done, total); };
  progress.map = std::ref(bars);
  ScreenRun r = screen_to_folder(trials_path, out, to_map_options(run), command_line(), progress);
  bars.finish();
  return r;
}

std::function<int()> setup_screen(CLI::App& sub) {
  struct Options {
    std::string trials, out = "orderband-screen";
    int threads = 0;
    bool quiet = false;
    MapRunOptions run;
  };
  auto o = std::make_shared<Options>();
  sub.add_option("trials", o->trials, "trials description (TOML)")->required();
  sub.add_option("-o,--output", o->out, "output folder")->capture_default_str();
  add_threads_option(sub, o->threads);
  sub.add_flag("--quiet", o->quiet, "no progress on stderr");
  add_map_options(sub, o->run);
  return [o]() {
    apply_threads(o->threads);
    const ScreenRun r = run_screen(o->trials, o->out, o->run, o->quiet);
    std::printf("report: %s\n", r.report.c_str());
    if (!r.failed.empty())
      std::fprintf(stderr, "orderband screen: %zu of the trials failed (listed in the report and comparison.json)\n",
                   r.failed.size());
    return r.failed.empty() ? 0 : 1;
  };
}

}  // namespace orderband::cli
