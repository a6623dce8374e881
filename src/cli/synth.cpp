// `orderband synth SCENARIO.toml -o DIR`: make a synthetic scan with known truth.
#include <omp.h>

#include <cstdio>
#include <memory>

#include "command.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"
#include "progress.hpp"

namespace orderband::cli {

std::function<int()> setup_synth(CLI::App& sub) {
  struct Options {
    std::string scenario, out;
    int threads = 0;
    bool quiet = false;
  };
  auto o = std::make_shared<Options>();
  sub.add_option("scenario", o->scenario, "scenario file (TOML)")->required();
  sub.add_option("-o,--output", o->out, "folder for the synthetic scan (created if needed)")->required();
  add_threads_option(sub, o->threads);
  sub.add_flag("--quiet", o->quiet, "no progress on stderr");
  return [o]() {
    apply_threads(o->threads);
    const SynthScenario s = read_synth_scenario(o->scenario);
    ProgressReporter progress("synth " + s.name, "patterns", o->quiet);
    StageBars spheres("directions", o->quiet);
    bool spheres_open = false;
    write_synthetic_scan(
        s, o->out, command_line(),
        [&](size_t d, size_t t) {
          if (spheres_open) spheres.finish(), spheres_open = false;
          progress(d, t);
        },
        [&](const std::string& phase, size_t d, size_t t) {
          spheres("many-beam sphere of " + phase, d, t), spheres_open = true;
        });
    progress.finish();
    if (!o->quiet)
      std::fprintf(stderr, "synthetic scan written to %s (scan.toml, patterns.raw, truth.json)\n", o->out.c_str());
    return 0;
  };
}

}  // namespace orderband::cli
