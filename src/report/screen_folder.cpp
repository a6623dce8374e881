// Heat-treatment trials screened into an output folder.
#include "orderband/screen_folder.hpp"

#include <cstdlib>
#include <filesystem>
#include <sstream>

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
std::string map_trial(const Trial& t, const std::string& out, const MapOptions& options,
                      const std::string& command_line, const ScreenProgress& progress, std::ostream& log,
                      ScreenRun& run) {
  const std::string scan_path = t.scan.empty() ? cached_scan(t.scenario, command_line, progress) : t.scan;
  const ScanInputs inputs = read_scan_inputs(read_scan_config(scan_path));
  const std::string folder = out + "/" + t.label;
  const std::string key = map_run_key(inputs, options);
  const std::string key_file = folder + "/run_key.txt";
  const bool reuse =
      fs::exists(key_file) && fs::exists(folder + "/summary.json") && read_text_file(key_file, "run key") == key + "\n";
  if (reuse) {
    log << "trial " << t.label << ": reused (inputs and parameters unchanged, key " << key << ")\n";
    tell(progress, "trial " + t.label + ": results reused (inputs unchanged)");
  } else {
    tell(progress, "trial " + t.label + ": mapping " + scan_path);
    const MapFolderRun mapped = map_to_folder(inputs, folder, options, key, command_line, progress.map);
    if (mapped.rows_resumed > 0)
      tell(progress, "trial " + t.label + ": " + std::to_string(mapped.rows_resumed) +
                         " row results taken from the interrupted run");
    for (const std::string& w : map_warnings(mapped.results)) warn(progress, "trial " + t.label + ": " + w);
    write_text_atomically(key_file, key + "\n");
    log << "trial " << t.label << ": computed (key " << key << ")\n";
    run.computed.push_back(t.label);
  }
  return read_text_file(folder + "/summary.json", "trial summary");
}

}  // namespace

ScreenRun screen_to_folder(const std::string& trials_path, const std::string& out, const MapOptions& options,
                           const std::string& command_line, const ScreenProgress& progress) {
  ScreenRun run;
  run.trials = read_trials_config(trials_path);
  std::error_code ec;
  fs::create_directories(out, ec);
  if (ec) fail("cannot create output folder '", out, "': ", ec.message());
  std::ostringstream log;
  std::vector<Trial> mapped;
  std::vector<std::string> summary_texts;
  for (const Trial& t : run.trials.trials) {
    try {
      const std::string text = map_trial(t, out, options, command_line, progress, log, run);
      run.summaries.push_back(parse_trial_summary(text, out + "/" + t.label + "/summary.json"));
      summary_texts.push_back(text);
      mapped.push_back(t);
    } catch (const std::exception& e) {
      log << "trial " << t.label << ": failed: " << e.what() << "\n";
      warn(progress, "trial " + t.label + " failed: " + e.what());
      run.failed.emplace_back(t.label, e.what());
    }
  }
  write_text_atomically(out + "/screen_log.txt", log.str());
  if (mapped.empty()) fail("every trial failed (see ", out, "/screen_log.txt)");
  run.trials.trials = mapped;  // the comparison covers the trials that were mapped
  run.comparison = compare_trials(run.trials, run.summaries);
  write_screen_outputs(out, run, summary_texts, command_line);
  run.report = out + "/report.html";
  return run;
}

}  // namespace orderband
