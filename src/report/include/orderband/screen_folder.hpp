// Heat-treatment trials screened into an output folder, as `orderband screen` does it: every trial
// mapped (or reused when nothing changed), compared, ranked and reported.
#pragma once

#include <cstddef>
#include <functional>
#include <string>
#include <utility>
#include <vector>

#include "orderband/map_scan.hpp"
#include "orderband/process_share.hpp"
#include "orderband/screen_comparison.hpp"
#include "orderband/trials.hpp"

namespace orderband {

/// What a screen tells while it runs (every member may be empty).
struct ScreenProgress {
  std::function<void(const std::string& line)> message;      ///< one line per event: trial mapped or reused
  std::function<void(const std::string& line)> warning;      ///< a trial's map warnings and failures
  std::function<void(size_t done, size_t total)> synthesis;  ///< a scenario's scan being made
  StageProgress map;                                         ///< a trial's map
};

struct ScreenRun {
  TrialsConfig trials;                                      ///< the trials mapped and compared
  std::vector<TrialSummary> summaries;                      ///< per compared trial
  ScreenComparison comparison;                              ///< numbers, kinetics, rankings
  std::vector<std::string> computed;                        ///< trials mapped in this run (others were reused)
  std::vector<std::pair<std::string, std::string>> failed;  ///< (label, error) of trials whose map failed
  std::string report;                                       ///< the report page's path
};

/// Which process maps each trial (trial order): the trials whose scan is made from the same
/// scenario go to the same process, so that the scenario's cached scan is written by one process;
/// such groups are dealt out in trial order, each to the process with the fewest trials so far.
std::vector<int> trial_owners(const TrialsConfig& trials, int ranks);

/// Screens the trials of `trials_path` into `out`: each trial's map in out/LABEL (map_to_folder;
/// reused when its run key, map_run_key, is unchanged; a scenario's scan made once in the cache,
/// scenario_cache_folder), then comparison.csv, comparison.json, the charts and report.html. A
/// trial that fails is logged (screen_log.txt), listed in the report and left out of the
/// comparison; the others go on (an Error only if every trial fails). Shared among processes
/// (`share`), each maps the trials trial_owners gives it, or, with more processes than trials, each
/// trial is mapped by a crew of processes that share its rows (map_to_folder); rank 0 gathers what
/// happened, reads the other trials' summaries from their folders (`out` must be on a file system
/// all of them see) and writes the comparison; the other processes return their own trials'
/// outcome with no report.
ScreenRun screen_to_folder(const std::string& trials_path, const std::string& out, const MapOptions& options,
                           const std::string& command_line, const ScreenProgress& progress = {},
                           const ProcessShare& share = {});

/// The cache of synthetic scans: $ORDERBAND_CACHE, else $XDG_CACHE_HOME/orderband, else
/// ~/.cache/orderband, else a folder under the system's temporary folder.
std::string scenario_cache_folder();

}  // namespace orderband
