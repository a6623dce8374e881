// Heat-treatment trials screened into an output folder.
#include "orderband/screen_folder.hpp"

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <sstream>

#include <nlohmann/json.hpp>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/input_hash.hpp"
#include "orderband/map_folder.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/synth_scan.hpp"
#include "orderband/text_file.hpp"
#include "orderband/trial_summary_file.hpp"
#include "orderband/trials_toml.hpp"
#include "orderband/version.hpp"
#include "screen_output.hpp"

namespace fs = std::filesystem;

namespace orderband {

std::string scenario_cache_folder() {
  if (const char* c = std::getenv("ORDERBAND_CACHE"); c && *c) return c;
  if (const char* x = std::getenv("XDG_CACHE_HOME"); x && *x) return std::string(x) + "/orderband";
  if (const char* h = std::getenv("HOME"); h && *h) return std::string(h) + "/.cache/orderband";
  return (fs::temp_directory_path() / "orderband-cache").string();
}

namespace {

void tell(const ScreenProgress& progress, const std::string& line) {
  if (progress.message) progress.message(line);
}

void warn(const ScreenProgress& progress, const std::string& line) {
  if (progress.warning) progress.warning(line);
}

/// A scenario's synthetic scan in the cache, made if absent (keyed by the scenario text and the version).
std::string cached_scan(const std::string& scenario, const std::string& command_line, const ScreenProgress& progress) {
  const std::string key = text_hash_fnv1a64(std::string(kVersion) + "|" + read_text_file(scenario, "scenario"));
  const std::string dir = scenario_cache_folder() + "/scans/" + fs::path(scenario).stem().string() + "-" + key;
  if (fs::exists(dir + "/scan.toml") && fs::exists(dir + "/truth.json")) return dir + "/scan.toml";
  const SynthScenario s = read_synth_scenario(scenario);
  tell(progress, "synth " + s.name + ": making the scan in " + dir);
  write_synthetic_scan(s, dir, command_line, progress.synthesis);
  return dir + "/scan.toml";
}

/// One trial mapped into out/LABEL, or reused when its key is unchanged; returns its summary text.
/// A crew of several processes maps the trial's rows together: its rank 0 writes the key and
/// returns the summary, the others return nothing.
std::string map_trial(const Trial& t, const std::string& out, const MapOptions& options,
                      const std::string& command_line, const ScreenProgress& progress, std::ostream& log,
                      bool& computed, const ProcessShare& crew = {}) {
  const std::string scan_path = t.scan.empty() ? cached_scan(t.scenario, command_line, progress) : t.scan;
  const ScanInputs inputs = read_scan_inputs(read_scan_config(scan_path));
  const std::string folder = out + "/" + t.label;
  const std::string key = map_run_key(inputs, options);
  const std::string key_file = folder + "/run_key.txt";
  const bool reuse =
      fs::exists(key_file) && fs::exists(folder + "/summary.json") && read_text_file(key_file, "run key") == key + "\n";
  computed = !reuse;
  if (reuse) {
    log << "trial " << t.label << ": reused (inputs and parameters unchanged, key " << key << ")\n";
    tell(progress, "trial " + t.label + ": results reused (inputs unchanged)");
    return read_text_file(folder + "/summary.json", "trial summary");
  }
  tell(progress, "trial " + t.label + ": mapping " + scan_path);
  const MapFolderRun mapped = map_to_folder(inputs, folder, options, key, command_line, progress.map, crew);
  if (crew.rank != 0) return {};
  if (mapped.rows_resumed > 0)
    tell(progress, "trial " + t.label + ": " + std::to_string(mapped.rows_resumed) +
                       " row results taken from the interrupted run");
  for (const std::string& w : map_warnings(mapped.results)) warn(progress, "trial " + t.label + ": " + w);
  write_text_atomically(key_file, key + "\n");
  log << "trial " << t.label << ": computed (key " << key << ")\n";
  return read_text_file(folder + "/summary.json", "trial summary");
}

/// What became of one trial in the process that mapped it.
struct TrialOutcome {
  size_t index = 0;
  bool ok = false, computed = false;
  std::string error, log;
};

/// The trials this process owns, mapped one after the other; a failure is recorded, not thrown.
/// Summary texts of the trials mapped here, by trial index.
std::vector<TrialOutcome> map_own_trials(const TrialsConfig& trials, const std::vector<int>& owners, int rank,
                                         const std::string& out, const MapOptions& options,
                                         const std::string& command_line, const ScreenProgress& progress,
                                         std::map<size_t, std::string>& summary_texts, const ProcessShare& crew = {}) {
  std::vector<TrialOutcome> outcomes;
  for (size_t i = 0; i < trials.trials.size(); ++i) {
    if (owners[i] != rank) continue;
    const Trial& t = trials.trials[i];
    TrialOutcome o;
    o.index = i;
    std::ostringstream log;
    try {
      summary_texts[i] = map_trial(t, out, options, command_line, progress, log, o.computed, crew);
      o.ok = true;
    } catch (const std::exception& e) {
      log << "trial " << t.label << ": failed: " << e.what() << "\n";
      warn(progress, "trial " + t.label + " failed: " + e.what());
      o.error = e.what();
    }
    o.log = log.str();
    outcomes.push_back(std::move(o));
  }
  return outcomes;
}

/// With more processes than trials: each distinct scenario's scan made by one process first (the
/// others wait), then every trial mapped by a crew of processes (contiguous ranks, crews of sizes
/// that differ by at most one) that shares its rows. Only a crew's rank 0 reports its trial.
std::vector<TrialOutcome> map_in_crews(const TrialsConfig& trials, const ProcessShare& share, const std::string& out,
                                       const MapOptions& options, const std::string& command_line,
                                       const ScreenProgress& progress, std::map<size_t, std::string>& summary_texts) {
  std::vector<std::string> scenarios;
  for (const Trial& t : trials.trials)
    if (!t.scenario.empty() && std::find(scenarios.begin(), scenarios.end(), t.scenario) == scenarios.end())
      scenarios.push_back(t.scenario);
  for (size_t j = 0; j < scenarios.size(); ++j)
    if (static_cast<int>(j % static_cast<size_t>(share.processes)) == share.rank) try {
        cached_scan(scenarios[j], command_line, progress);
      } catch (const std::exception&) {
        // The trials that need it report the failure when they ask for the scan again.
      }
  share.wait_for_all();
  const size_t trial = static_cast<size_t>(share.rank) * trials.trials.size() / static_cast<size_t>(share.processes);
  const ProcessShare crew = share.crew(static_cast<int>(trial));
  std::vector<int> owner(trials.trials.size(), -1);
  owner[trial] = 0;  // this crew's trial, mapped as if by process 0 of a screen of its own
  std::map<size_t, std::string> texts;
  std::vector<TrialOutcome> outcomes = map_own_trials(trials, owner, 0, out, options, command_line,
                                                      crew.rank == 0 ? progress : ScreenProgress{}, texts, crew);
  if (crew.rank != 0) return {};
  summary_texts.insert(texts.begin(), texts.end());
  return outcomes;
}

nlohmann::json outcomes_json(const std::vector<TrialOutcome>& outcomes) {
  nlohmann::json j = nlohmann::json::array();
  for (const TrialOutcome& o : outcomes)
    j.push_back({{"index", o.index}, {"ok", o.ok}, {"computed", o.computed}, {"error", o.error}, {"log", o.log}});
  return j;
}

/// Every process's outcomes at rank 0 (the processes' texts from ProcessShare::all_gather), by trial index.
std::vector<TrialOutcome> all_outcomes(const std::vector<std::string>& texts, size_t trial_count) {
  std::vector<TrialOutcome> all(trial_count);
  std::vector<uint8_t> seen(trial_count, 0);
  for (const std::string& text : texts)
    for (const nlohmann::json& j : nlohmann::json::parse(text)) {
      const size_t i = j.at("index").get<size_t>();
      if (i >= trial_count || seen[i]) fail("screen: a process reported trial ", i, " out of turn");
      all[i] = {i, j.at("ok").get<bool>(), j.at("computed").get<bool>(), j.at("error").get<std::string>(),
                j.at("log").get<std::string>()};
      seen[i] = 1;
    }
  for (size_t i = 0; i < trial_count; ++i)
    if (!seen[i]) fail("screen: no process reported trial ", i);
  return all;
}

}  // namespace

std::vector<int> trial_owners(const TrialsConfig& trials, int ranks) {
  if (ranks < 1) fail("screen: the number of processes must be at least 1, got ", ranks);
  std::vector<int> owner(trials.trials.size(), -1), load(static_cast<size_t>(ranks), 0);
  std::map<std::string, int> scenario_owner;
  for (size_t i = 0; i < trials.trials.size(); ++i) {
    const std::string& scenario = trials.trials[i].scenario;
    if (const auto it = scenario_owner.find(scenario); !scenario.empty() && it != scenario_owner.end()) {
      owner[i] = it->second;
    } else {
      owner[i] = static_cast<int>(std::min_element(load.begin(), load.end()) - load.begin());
      if (!scenario.empty()) scenario_owner[scenario] = owner[i];
    }
    load[static_cast<size_t>(owner[i])] += 1;
  }
  return owner;
}

ScreenRun screen_to_folder(const std::string& trials_path, const std::string& out, const MapOptions& options,
                           const std::string& command_line, const ScreenProgress& progress, const ProcessShare& share) {
  if (share.shared() && !share.all_gather)
    fail("screen: shared among ", share.processes, " processes without a way to gather");
  ScreenRun run;
  run.trials = read_trials_config(trials_path);
  std::error_code ec;
  fs::create_directories(out, ec);
  if (ec) fail("cannot create output folder '", out, "': ", ec.message());
  std::map<size_t, std::string> summary_texts;
  std::vector<TrialOutcome> outcomes;
  if (static_cast<size_t>(share.processes) > run.trials.trials.size())
    outcomes = map_in_crews(run.trials, share, out, options, command_line, progress, summary_texts);
  else
    outcomes = map_own_trials(run.trials, trial_owners(run.trials, share.processes), share.rank, out, options,
                              command_line, progress, summary_texts);
  if (share.shared()) {
    const std::string mine = outcomes_json(outcomes).dump();
    std::vector<std::string> texts;
    for (const std::vector<uint8_t>& bytes : share.all_gather(std::vector<uint8_t>(mine.begin(), mine.end())))
      texts.emplace_back(bytes.begin(), bytes.end());
    if (share.rank != 0) {
      for (const TrialOutcome& o : outcomes) {
        const std::string& label = run.trials.trials[o.index].label;
        if (o.computed) run.computed.push_back(label);
        if (!o.ok) run.failed.emplace_back(label, o.error);
      }
      return run;
    }
    outcomes = all_outcomes(texts, run.trials.trials.size());
  }
  std::string log;
  std::vector<Trial> mapped;
  std::vector<std::string> texts;
  for (const TrialOutcome& o : outcomes) {
    const Trial& t = run.trials.trials[o.index];
    log += o.log;
    if (o.computed) run.computed.push_back(t.label);
    if (!o.ok) {
      run.failed.emplace_back(t.label, o.error);
      continue;
    }
    try {
      const std::string path = out + "/" + t.label + "/summary.json";
      const auto own = summary_texts.find(o.index);
      const std::string text = own != summary_texts.end() ? own->second : read_text_file(path, "trial summary");
      run.summaries.push_back(parse_trial_summary(text, path));
      texts.push_back(text);
      mapped.push_back(t);
    } catch (const std::exception& e) {
      log += "trial " + t.label + ": failed: " + e.what() + "\n";
      warn(progress, "trial " + t.label + " failed: " + e.what());
      run.failed.emplace_back(t.label, e.what());
    }
  }
  write_text_atomically(out + "/screen_log.txt", log);
  if (mapped.empty()) fail("every trial failed (see ", out, "/screen_log.txt)");
  run.trials.trials = mapped;  // the comparison covers the trials that were mapped
  run.comparison = compare_trials(run.trials, run.summaries);
  write_screen_outputs(out, run, texts, command_line);
  run.report = out + "/report.html";
  return run;
}

}  // namespace orderband
