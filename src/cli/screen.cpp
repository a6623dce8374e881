// `orderband screen TRIALS.toml -o OUT`: heat-treatment trials side by side, kinetics, ranking.
#include <cstdio>
#include <functional>
#include <memory>

#include "command.hpp"
#include "mpi_session.hpp"
#include "progress.hpp"
#include "screen_runner.hpp"

namespace orderband::cli {

ScreenRun run_screen(const std::string& trials_path, const std::string& out, const MapRunOptions& run, bool quiet,
                     const ProcessShare& share) {
  // Under a launch only rank 0 draws progress bars; every process tells its own trials' events,
  // the others' lines marked with their rank.
  const bool bars_quiet = quiet || share.rank != 0;
  const std::string who = share.shared() ? "[" + std::to_string(share.rank) + "] " : "";
  StageBars bars("points", bars_quiet), synthesis("patterns", bars_quiet);
  ScreenProgress progress;
  progress.message = [&](const std::string& line) {
    bars.finish(), synthesis.finish();
    if (!quiet) std::fprintf(stderr, "%s%s\n", who.c_str(), line.c_str());
  };
  progress.warning = [&](const std::string& line) {
    bars.finish(), synthesis.finish();
    std::fprintf(stderr, "orderband screen: %s%s\n", who.c_str(), line.c_str());
  };
  progress.synthesis = [&](size_t done, size_t total) { synthesis("synth", done, total); };
  progress.map = std::ref(bars);
  ScreenRun r = screen_to_folder(trials_path, out, to_map_options(run), command_line(), progress, share);
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
    const ScreenRun r = run_screen(o->trials, o->out, o->run, o->quiet, mpi_session().process_share());
    if (r.report.empty()) return r.failed.empty() ? 0 : 1;  // a process of a launch other than rank 0
    std::printf("report: %s\n", r.report.c_str());
    if (!r.failed.empty())
      std::fprintf(stderr, "orderband screen: %zu of the trials failed (listed in the report and comparison.json)\n",
                   r.failed.size());
    return r.failed.empty() ? 0 : 1;
  };
}

}  // namespace orderband::cli
