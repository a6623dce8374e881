// Trials descriptions (TOML).
#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <filesystem>

#include "orderband/error.hpp"
#include "orderband/trials_toml.hpp"
#include "toml_reader.hpp"

namespace fs = std::filesystem;

namespace orderband {

namespace {

/// [screen]: the title and the coarsening exponent (a number, or "free"; 3 when absent).
void read_screen_table(TomlReader& r, const std::string& path, TrialsConfig& c) {
  const toml::table* s = r.table("screen", false);
  r.check_keys(s, "screen", {"title", "exponent"});
  c.title = r.get<std::string>(s, "screen", "title").value_or(fs::path(path).stem().string());
  if (s && s->get("exponent")) {
    const toml::node* e = s->get("exponent");
    if (e->is_string() && *e->value<std::string>() == "free")
      c.exponent.reset();
    else if (auto v = e->value<double>(); v && *v > 0)
      c.exponent = *v;
    else
      fail(path, ": [screen] exponent must be a positive number or \"free\"");
  } else {
    c.exponent = 3.0;  // LSW
  }
}

/// [target]: the window's ranges and the primary fraction's limit.
TargetWindow read_target_table(TomlReader& r, const std::string& path) {
  const toml::table* t = r.table("target", false);
  r.check_keys(t, "target", {"ordered_fraction", "secondary_mean_ecd_um", "max_primary_fraction"});
  auto range = [&](const char* key) -> std::optional<std::pair<double, double>> {
    if (!t || !t->get(key)) return std::nullopt;
    const toml::array* a = t->get(key)->as_array();
    if (!a || a->size() != 2 || !(*a)[0].value<double>() || !(*a)[1].value<double>())
      fail(path, ": [target] ", key, " must be [low, high]");
    const double lo = *(*a)[0].value<double>(), hi = *(*a)[1].value<double>();
    if (!(hi > lo) || !std::isfinite(lo) || !std::isfinite(hi) || lo < 0)
      fail(path, ": [target] ", key, " needs finite 0 <= low < high, got [", lo, ", ", hi, "]");
    return std::pair{lo, hi};
  };
  TargetWindow target;
  target.ordered_fraction = range("ordered_fraction");
  target.secondary_mean_ecd_um = range("secondary_mean_ecd_um");
  if (auto v = r.get<double>(t, "target", "max_primary_fraction")) {
    if (!(*v >= 0 && *v <= 1)) fail(path, ": [target] max_primary_fraction must be within [0, 1], got ", *v);
    target.max_primary_fraction = *v;
  }
  return target;
}

/// The label names the trial's folder inside the screen folder: letters, digits, '-', '_', '.',
/// '+', not starting with '.' (no "." or "..", which would write beside or into the screen folder
/// itself), at most 64 characters.
void check_label(const std::string& path, const std::string& name, const std::string& label) {
  const bool safe =
      !label.empty() && label.size() <= 64 && label[0] != '.' && std::all_of(label.begin(), label.end(), [](char ch) {
        return std::isalnum(static_cast<unsigned char>(ch)) || ch == '-' || ch == '_' || ch == '.' || ch == '+';
      });
  if (!safe)
    fail(path, ": [", name, "] label '", label.substr(0, 64),
         "' must be 1 to 64 letters, digits, '-', '_', '.' or '+', not starting with '.' (it names the trial's "
         "folder)");
}

/// One [[trial]] entry.
Trial read_trial(TomlReader& r, const std::string& path, const toml::table* e, const std::string& name) {
  r.check_keys(e, name, {"label", "scan", "scenario", "temperature_c", "time_h", "notes"});
  Trial tr;
  tr.label = r.require<std::string>(e, name, "label");
  check_label(path, name, tr.label);
  if (auto v = r.get<std::string>(e, name, "scan")) tr.scan = r.resolve(*v);
  if (auto v = r.get<std::string>(e, name, "scenario")) tr.scenario = r.resolve(*v);
  if (tr.scan.empty() == tr.scenario.empty())
    fail(path, ": [", name, "] needs exactly one of 'scan' (a scan description) or 'scenario' (synthetic)");
  for (const std::string& f : {tr.scan, tr.scenario})
    if (!f.empty() && !fs::exists(f)) fail(path, ": [", name, "] file '", f, "' does not exist");
  tr.temperature_c = r.require<double>(e, name, "temperature_c");
  if (!(tr.temperature_c >= -273.15 && tr.temperature_c <= 5000))
    fail(path, ": [", name, "] temperature_c must be a finite temperature within [-273.15, 5000] °C, got ",
         tr.temperature_c);
  tr.time_h = r.require<double>(e, name, "time_h");
  if (!(tr.time_h >= 0 && tr.time_h <= 1e7))
    fail(path, ": [", name, "] time_h must be a finite time within [0, 1e7] h, got ", tr.time_h);
  tr.notes = r.get<std::string>(e, name, "notes").value_or("");
  return tr;
}

}  // namespace

TrialsConfig read_trials_config(const std::string& path) {
  const std::string text = read_text_file(path, "trials description");
  const toml::table root = parse_toml_or_fail(text, path);
  TomlReader r(root, path);
  for (const auto& [k, v] : root) {
    const std::string key(k.str());
    if (key != "screen" && key != "target" && key != "trial")
      fail(path, ": unknown table [", key, "] (known: screen, target, [[trial]])");
  }
  TrialsConfig c;
  c.path = fs::absolute(path).lexically_normal().string();
  c.folder = r.folder();
  read_screen_table(r, path, c);
  c.target = read_target_table(r, path);
  const toml::array* trials = root.get("trial") ? root.get("trial")->as_array() : nullptr;
  if (!trials || trials->empty()) fail(path, ": no [[trial]] entries");
  for (size_t i = 0; i < trials->size(); ++i) {
    const toml::table* e = (*trials)[i].as_table();
    const std::string name = "trial " + std::to_string(i + 1);
    if (!e) fail(path, ": [[trial]] ", i + 1, " must be a table");
    const Trial tr = read_trial(r, path, e, name);
    for (const Trial& o : c.trials)
      if (o.label == tr.label) fail(path, ": two trials are labelled '", tr.label, "'");
    c.trials.push_back(tr);
  }
  return c;
}

}  // namespace orderband
