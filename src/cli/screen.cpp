// `orderband screen TRIALS.toml -o OUT`: heat-treatment trials side by side, kinetics, ranking.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <sstream>

#include "command.hpp"
#include "map_runner.hpp"
#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/html_page.hpp"
#include "orderband/input_hash.hpp"
#include "orderband/kinetics.hpp"
#include "orderband/scan_config_toml.hpp"
#include "orderband/scan_inputs_io.hpp"
#include "orderband/svg_plot.hpp"
#include "orderband/synth.hpp"
#include "orderband/synth_scan.hpp"
#include "orderband/text_file.hpp"
#include "orderband/trials.hpp"
#include "orderband/trials_toml.hpp"
#include "orderband/version.hpp"
#include "progress.hpp"
#include "screen_runner.hpp"

namespace fs = std::filesystem;

namespace orderband::cli {
namespace {

std::string cache_root() {
  if (const char* c = std::getenv("ORDERBAND_CACHE"); c && *c) return c;
  if (const char* x = std::getenv("XDG_CACHE_HOME"); x && *x) return std::string(x) + "/orderband";
  if (const char* h = std::getenv("HOME"); h && *h) return std::string(h) + "/.cache/orderband";
  return (fs::temp_directory_path() / "orderband-cache").string();
}

/// A scenario's synthetic scan in the cache, made if absent (keyed by the scenario text and the version).
std::string cached_scan(const std::string& scenario, bool quiet) {
  const std::string key = text_hash_fnv1a64(std::string(kVersion) + "|" + read_text_file(scenario, "scenario"));
  const std::string dir = cache_root() + "/scans/" + fs::path(scenario).stem().string() + "-" + key;
  if (fs::exists(dir + "/scan.toml") && fs::exists(dir + "/truth.json")) return dir + "/scan.toml";
  const SynthScenario s = read_synth_scenario(scenario);
  ProgressReporter bar("synth " + s.name, "patterns", quiet);
  write_synthetic_scan(s, dir, command_line(), [&](size_t d, size_t t) { bar(d, t); });
  bar.finish();
  return dir + "/scan.toml";
}

/// A trial's numbers for the ranking from its summary.json: the ordered fraction with its ASTM
/// E562 interval, the secondary size as the mean of all sections from the preferred 3-D fit (with
/// its interval) when determined, else the resolved sections' mean; `radius_3d` gets half the
/// fitted 3-D mean diameter (0 when not determined).
TrialNumbers trial_numbers(const nlohmann::json& s, std::vector<double>& radius_3d) {
  TrialNumbers n;
  n.ordered_fraction = {s["ordered_area_fraction"], s["ci95"]["low"], s["ci95"]["high"]};
  const double section_mean = s["classes"]["secondary"]["mean_ecd_um"];
  n.secondary_mean_ecd_um = {section_mean, section_mean, section_mean};
  const std::string preferred = s.contains("secondary_3d") ? s["secondary_3d"].value("preferred", "") : "";
  const nlohmann::json fit = preferred.empty() ? nlohmann::json() : s["secondary_3d"][preferred];
  if (fit.is_object() && fit.value("determined", false)) {
    n.secondary_mean_ecd_um = {fit["mean_section_diameter_um"], fit["mean_section_diameter_ci95_um"][0],
                               fit["mean_section_diameter_ci95_um"][1]};
    n.secondary_size_from_fit = true;
    radius_3d.push_back(0.5 * fit["mean_diameter_um"].get<double>());
  } else {
    radius_3d.push_back(0.0);
  }
  n.primary_fraction = s["classes"]["primary"]["area_fraction"];
  n.primary_count = s["classes"]["primary"]["count"];
  n.secondary_count = s["classes"]["secondary"]["count"];
  return n;
}

/// The truth's numbers of a synthetic trial (its summary's `truth`), counted as the measurement
/// is: exact values, so the truth's verdict against the same window is decided.
std::optional<TrialNumbers> truth_numbers(const nlohmann::json& s) {
  if (!s.contains("truth")) return std::nullopt;
  const nlohmann::json& t = s["truth"];
  auto cls = [&](const char* name, const char* key) {
    return t["classes"].contains(name) ? t["classes"][name].value(key, 0.0) : 0.0;
  };
  TrialNumbers n;
  const double f = t["ordered_area_fraction"], ecd = cls("secondary", "mean_ecd_all_um");
  n.ordered_fraction = {f, f, f};
  n.secondary_mean_ecd_um = {ecd, ecd, ecd};
  n.secondary_size_from_fit = true;
  n.primary_fraction = cls("primary", "area_fraction");
  n.primary_count = 1000, n.secondary_count = 1000;  // the truth is exact: no class is too small to judge
  return n;
}

/// The truth beside the measurement for synthetic trials: values, verdicts and ranks.
void write_truth_table(std::ostream& h, const TrialsConfig& tc, const std::vector<TrialNumbers>& numbers,
                       const std::vector<Ranked>& ranking, const std::vector<std::optional<TrialNumbers>>& truth,
                       const std::vector<Ranked>& truth_ranking) {
  if (truth_ranking.empty()) return;
  auto place = [](const std::vector<Ranked>& r, size_t trial) {
    for (size_t k = 0; k < r.size(); ++k)
      if (r[k].trial == trial) return std::pair<size_t, Verdict>{k + 1, r[k].verdict};
    return std::pair<size_t, Verdict>{0, Verdict::outside};
  };
  h << "<h2>Truth beside measurement (synthetic trials)</h2><table><tr><th>trial</th><th>ordered fraction, "
       "truth / measured</th><th>secondary mean section ECD (µm), truth (all sections) / measured</th><th>primary "
       "fraction, truth / measured</th><th>verdict, truth / measured</th><th>rank, truth / measured</th></tr>";
  for (size_t i = 0; i < numbers.size(); ++i) {
    if (!truth[i]) continue;
    const auto [t_rank, t_verdict] = place(truth_ranking, i);
    const auto [m_rank, m_verdict] = place(ranking, i);
    h << "<tr><td>" << xml_escape(tc.trials[i].label) << "</td><td>"
      << format_number("%.3f", truth[i]->ordered_fraction.value) << " / "
      << format_number("%.3f", numbers[i].ordered_fraction.value) << "</td><td>"
      << format_number("%.3f", truth[i]->secondary_mean_ecd_um.value) << " / "
      << format_number("%.3f", numbers[i].secondary_mean_ecd_um.value) << "</td><td>"
      << format_number("%.3f", truth[i]->primary_fraction) << " / "
      << format_number("%.3f", numbers[i].primary_fraction) << "</td><td>" << to_string(t_verdict) << " / "
      << to_string(m_verdict) << "</td><td>" << t_rank << " / " << m_rank << "</td></tr>";
  }
  h << "</table>\n";
}

/// Coarsening kinetics of the trials: per temperature the fit, its JSON record and the radius
/// used per trial; an Arrhenius fit over two or more temperatures.
struct Kinetics {
  std::map<double, std::vector<size_t>> by_temperature;  ///< trials per temperature
  nlohmann::json kinetics = nlohmann::json::array(), arrhenius = nullptr;
  std::map<double, CoarseningFit> fits;
  std::map<double, bool> fits_3d;      ///< the fit used 3-D radii
  std::vector<double> kinetic_radius;  ///< per trial (0: none)
};

Kinetics fit_kinetics(const TrialsConfig& tc, const std::vector<nlohmann::json>& summaries,
                      const std::vector<double>& radius_3d) {
  // Kinetics per temperature, on the 3-D mean radius of the secondary particles where every trial
  // of the temperature has it (the LSW constant is for 3-D radii), else on the mean radius of the
  // resolved sections, labelled as such.
  Kinetics out;
  auto& [by_temperature, kinetics, arrhenius, fits, fits_3d, kinetic_radius] = out;
  for (size_t i = 0; i < tc.trials.size(); ++i) by_temperature[tc.trials[i].temperature_c].push_back(i);
  kinetic_radius.assign(tc.trials.size(), 0.0);
  std::vector<double> temps, ks;
  for (const auto& [temp, idx] : by_temperature) {
    std::vector<double> t, r;
    const bool three_d = std::all_of(idx.begin(), idx.end(), [&](size_t i) { return radius_3d[i] > 0; });
    for (size_t i : idx) {
      const double radius =
          three_d ? radius_3d[i] : 0.5 * summaries[i]["classes"]["secondary"]["mean_ecd_um"].get<double>();
      if (radius > 0) t.push_back(tc.trials[i].time_h), r.push_back(radius);
      kinetic_radius[i] = radius;
    }
    nlohmann::json k = {{"temperature_c", temp},
                        {"trials", t.size()},
                        {"radius", three_d ? "3-D mean radius (the fit preferred by AIC, log-normal or LSW, to "
                                             "the sections truncated at the detection limit)"
                                           : "mean radius of the resolved sections (not 3-D; biased by truncation)"}};
    try {
      if (t.size() < 2) fail("fewer than two trials with secondary particles");
      const CoarseningFit f = tc.exponent ? fit_coarsening(t, r, *tc.exponent) : fit_coarsening_free(t, r);
      fits[temp] = f;
      fits_3d[temp] = three_d;
      k["exponent"] = f.exponent;
      k["exponent_ci95"] = {f.exponent_low, f.exponent_high};
      k["exponent_fitted"] = !tc.exponent.has_value();
      k["k_um_pow_n_per_h"] = f.k;
      k["k_ci95"] = {std::isfinite(f.k_low) ? nlohmann::json(f.k_low) : nlohmann::json(nullptr),
                     std::isfinite(f.k_high) ? nlohmann::json(f.k_high) : nlohmann::json(nullptr)};
      k["r0_pow_n_um_pow_n"] = f.r0_pow_n;
      if (f.k > 0) temps.push_back(temp), ks.push_back(f.k);
    } catch (const Error& e) {
      k["note"] = e.what();
    }
    kinetics.push_back(k);
  }
  if (temps.size() >= 2) {
    const ArrheniusFit a = fit_arrhenius(temps, ks);
    arrhenius = {
        {"activation_energy_kj_mol", a.activation_kj_mol},
        {"ci95",
         {std::isfinite(a.q_low) ? nlohmann::json(a.q_low) : nlohmann::json(nullptr),
          std::isfinite(a.q_high) ? nlohmann::json(a.q_high) : nlohmann::json(nullptr)}},
        {"caution", "k also carries the 1/T prefactor and the solubility of the rate law, so Q is an apparent value"}};
  }
  return out;
}

/// Synthetic trials: the truth ranked against the same window (only when every trial has a truth).
std::vector<Ranked> rank_truth(const std::vector<std::optional<TrialNumbers>>& truth, const TargetWindow& target) {
  if (!std::all_of(truth.begin(), truth.end(), [](const auto& t) { return t.has_value(); })) return {};
  std::vector<TrialNumbers> exact;
  for (const auto& t : truth) exact.push_back(*t);
  return rank_trials(exact, target);
}

/// Maps every trial it can (reusing a trial whose inputs and options are unchanged); a failed trial
/// is logged and left out. The trials description comes back with the mapped trials only.
TrialsConfig map_trials(const std::string& trials_path, const std::string& out, const MapRunOptions& run, bool quiet,
                        ScreenOutcome& outcome, std::vector<nlohmann::json>& summaries) {
  TrialsConfig tc = read_trials_config(trials_path);
  std::error_code ec;
  fs::create_directories(out, ec);
  if (ec) fail("cannot create output folder '", out, "': ", ec.message());
  std::ostringstream log;
  std::vector<Trial> mapped;  // the trials whose map succeeded; a failed one is reported and skipped
  for (const Trial& t : tc.trials) {
    try {
      const std::string scan_path = t.scan.empty() ? cached_scan(t.scenario, quiet) : t.scan;
      const ScanInputs inputs = read_scan_inputs(read_scan_config(scan_path));
      const std::string folder = out + "/" + t.label;
      const std::string key = map_key(inputs, run);
      const std::string key_file = folder + "/run_key.txt";
      const bool reuse = fs::exists(key_file) && fs::exists(folder + "/summary.json") &&
                         read_text_file(key_file, "run key") == key + "\n";
      if (reuse) {
        log << "trial " << t.label << ": reused (inputs and parameters unchanged, key " << key << ")\n";
        if (!quiet) std::fprintf(stderr, "trial %s: results reused (inputs unchanged)\n", t.label.c_str());
      } else {
        if (!quiet) std::fprintf(stderr, "trial %s: mapping %s\n", t.label.c_str(), scan_path.c_str());
        run_map(inputs, folder, run, quiet);
        write_text_atomically(key_file, key + "\n");
        log << "trial " << t.label << ": computed (key " << key << ")\n";
        outcome.computed.push_back(t.label);
      }
      summaries.push_back(nlohmann::json::parse(read_text_file(folder + "/summary.json", "trial summary")));
      mapped.push_back(t);
    } catch (const std::exception& e) {
      log << "trial " << t.label << ": failed: " << e.what() << "\n";
      std::fprintf(stderr, "orderband screen: trial %s failed: %s\n", t.label.c_str(), e.what());
      outcome.failed.emplace_back(t.label, e.what());
    }
  }
  write_text_atomically(out + "/screen_log.txt", log.str());
  if (mapped.empty()) fail("every trial failed (see ", out, "/screen_log.txt)");
  tc.trials = mapped;  // the comparison covers the trials that were mapped
  return tc;
}

/// A screen's mapped trials with everything compared: numbers, kinetics, ranking, truth.
struct ScreenData {
  TrialsConfig tc;
  std::vector<nlohmann::json> summaries;
  std::vector<TrialNumbers> numbers;
  std::vector<double> radius_3d;  ///< per trial: half the fitted 3-D mean diameter (0: not determined)
  Kinetics kin;
  std::vector<Ranked> ranking;
  std::vector<std::optional<TrialNumbers>> truth;
  std::vector<Ranked> truth_ranking;
};

ScreenData compare_trials(TrialsConfig tc, std::vector<nlohmann::json> summaries) {
  ScreenData d{std::move(tc), std::move(summaries), {}, {}, {}, {}, {}, {}};
  for (const auto& s : d.summaries) d.numbers.push_back(trial_numbers(s, d.radius_3d));
  d.kin = fit_kinetics(d.tc, d.summaries, d.radius_3d);
  d.ranking = rank_trials(d.numbers, d.tc.target);
  for (const auto& s : d.summaries) d.truth.push_back(truth_numbers(s));
  d.truth_ranking = rank_truth(d.truth, d.tc.target);
  return d;
}

/// comparison.csv and comparison.json.
void write_comparison(const std::string& out, const ScreenData& d, const ScreenOutcome& outcome) {
  const TrialsConfig& tc = d.tc;
  const std::vector<nlohmann::json>& summaries = d.summaries;
  const std::vector<TrialNumbers>& numbers = d.numbers;
  const std::vector<Ranked>& ranking = d.ranking;
  const auto& truth = d.truth;
  const auto& truth_ranking = d.truth_ranking;
  const auto& [by_temperature, kinetics, arrhenius, fits, fits_3d, kinetic_radius] = d.kin;
  std::ostringstream csv;
  csv << "# orderband " << kVersion << ": " << command_line() << "\n"
      << "label,temperature_c,time_h,ordered_area_fraction,ci95_low,ci95_high,subresolution_ordered_fraction,"
         "primary_area_fraction,secondary_area_fraction,secondary_count,secondary_mean_ecd_um,"
         "secondary_number_density_per_um2,rank,distance_to_target,verdict\n";
  nlohmann::json table = nlohmann::json::array();
  for (size_t i = 0; i < tc.trials.size(); ++i) {
    const auto& s = summaries[i];
    size_t rank = 0;
    double dist = 0;
    std::string verdict;
    nlohmann::json flags = nlohmann::json::array();
    for (size_t k = 0; k < ranking.size(); ++k)
      if (ranking[k].trial == i)
        rank = k + 1, dist = ranking[k].distance, verdict = to_string(ranking[k].verdict), flags = ranking[k].flags;
    csv << tc.trials[i].label << ',' << tc.trials[i].temperature_c << ',' << tc.trials[i].time_h << ','
        << format_number("%.5f", s["ordered_area_fraction"]) << ',' << format_number("%.5f", s["ci95"]["low"]) << ','
        << format_number("%.5f", s["ci95"]["high"]) << ',' << format_number("%.5f", s["subresolution_ordered_fraction"])
        << ',' << format_number("%.5f", s["classes"]["primary"]["area_fraction"]) << ','
        << format_number("%.5f", s["classes"]["secondary"]["area_fraction"]) << ','
        << s["classes"]["secondary"]["count"].get<int>() << ','
        << format_number("%.5f", s["classes"]["secondary"]["mean_ecd_um"]) << ','
        << format_number("%.5f", s["classes"]["secondary"]["number_density_per_um2"]) << ',' << rank << ','
        << format_number("%.4f", dist) << ',' << verdict << '\n';
    table.push_back({{"label", tc.trials[i].label},
                     {"temperature_c", tc.trials[i].temperature_c},
                     {"time_h", tc.trials[i].time_h},
                     {"notes", tc.trials[i].notes},
                     {"ordered_area_fraction", s["ordered_area_fraction"]},
                     {"ci95", s["ci95"]},
                     {"ci95_bootstrap", s["ci95_bootstrap"]},
                     {"subresolution_ordered_fraction", s["subresolution_ordered_fraction"]},
                     {"classes", s["classes"]},
                     {"rank", rank},
                     {"distance_to_target", dist},
                     {"verdict", verdict},
                     {"flags", flags},
                     {"secondary_mean_section_ecd_um",
                      {{"value", numbers[i].secondary_mean_ecd_um.value},
                       {"ci95", {numbers[i].secondary_mean_ecd_um.low, numbers[i].secondary_mean_ecd_um.high}},
                       {"from_3d_fit", numbers[i].secondary_size_from_fit}}},
                     {"secondary_3d", s["secondary_3d"]},
                     {"report", tc.trials[i].label + "/report.html"}});
    if (truth[i]) {
      nlohmann::json tj = {{"ordered_area_fraction", truth[i]->ordered_fraction.value},
                           {"secondary_mean_section_ecd_um", truth[i]->secondary_mean_ecd_um.value},
                           {"primary_area_fraction", truth[i]->primary_fraction}};
      for (size_t k = 0; k < truth_ranking.size(); ++k)
        if (truth_ranking[k].trial == i) tj["rank"] = k + 1, tj["verdict"] = to_string(truth_ranking[k].verdict);
      table.back()["truth"] = tj;
    }
  }
  write_text_atomically(out + "/comparison.csv", csv.str());
  nlohmann::json j = {{"tool", "orderband"},    {"version", kVersion},   {"command_line", command_line()},
                      {"trials_file", tc.path}, {"title", tc.title},     {"trials", table},
                      {"kinetics", kinetics},   {"arrhenius", arrhenius}};
  nlohmann::json rk = nlohmann::json::array();
  for (const Ranked& r : ranking)
    rk.push_back({{"label", tc.trials[r.trial].label},
                  {"verdict", to_string(r.verdict)},
                  {"distance", r.distance},
                  {"reasons", r.reasons},
                  {"flags", r.flags}});
  j["ranking"] = rk;
  nlohmann::json failed = nlohmann::json::array();
  for (const auto& [label, error] : outcome.failed) failed.push_back({{"label", label}, {"error", error}});
  j["failed_trials"] = failed;
  write_text_atomically(out + "/comparison.json", j.dump(2) + "\n");
}

/// The screen's charts, rendered (also written as SVG files).
struct ScreenPlots {
  std::string fraction, classes, sizes, coarsening;
};

/// Series colours of the screen's charts.
const char* const kColours[] = {"#1f77b4", "#d62728", "#2ca02c", "#9467bd", "#ff7f0e", "#8c564b"};

/// The ordered area fraction against ageing time, one series per temperature.
std::string fraction_plot(const ScreenData& d) {
  const TrialsConfig& tc = d.tc;
  const std::vector<nlohmann::json>& summaries = d.summaries;
  const auto& by_temperature = d.kin.by_temperature;
  SvgPlot frac(560, 320, "ordered area fraction vs ageing time (95 % CI)", "ageing time (h)", "ordered area fraction");
  int ci = 0;
  for (const auto& [temp, idx] : by_temperature) {
    std::vector<double> t, f, lo, hi;
    for (size_t i : idx) {
      t.push_back(tc.trials[i].time_h), f.push_back(summaries[i]["ordered_area_fraction"]);
      lo.push_back(summaries[i]["ci95"]["low"]), hi.push_back(summaries[i]["ci95"]["high"]);
    }
    frac.error_bars(t, lo, hi, kColours[ci % 6]);
    frac.markers(t, f, kColours[ci % 6], format_number("%g °C", temp));
    ++ci;
  }
  return frac.render();
}

/// The area fraction per size class, bars per trial.
std::string class_plot(const ScreenData& d) {
  const TrialsConfig& tc = d.tc;
  const std::vector<nlohmann::json>& summaries = d.summaries;
  SvgPlot bars(560, 320, "area fraction per size class", "trial", "area fraction");
  std::vector<std::string> labels;
  const std::vector<std::string> class_names{"secondary", "primary"};
  for (size_t c = 0; c < class_names.size(); ++c) {
    std::vector<double> left, width, height;
    for (size_t i = 0; i < tc.trials.size(); ++i) {
      left.push_back(i - 0.35 + 0.35 * c), width.push_back(0.33);
      height.push_back(summaries[i]["classes"][class_names[c]]["area_fraction"]);
    }
    bars.bars(left, width, height, kColours[c], class_names[c]);
  }
  {
    std::vector<double> left, width, height;
    for (size_t i = 0; i < tc.trials.size(); ++i) {
      left.push_back(i - 0.35 + 0.7), width.push_back(0.0), height.push_back(0);
      labels.push_back(tc.trials[i].label);
    }
  }
  bars.x_categories(labels);
  bars.x_range(-0.7, tc.trials.size() - 0.3);
  // Headroom above the tallest bar for the legend (top right), so that it never covers a bar.
  double tallest = 0;
  for (const auto& summary : summaries)
    for (const std::string& name : class_names)
      tallest = std::max(tallest, summary["classes"][name]["area_fraction"].get<double>());
  bars.y_range(0, tallest > 0 ? 1.3 * tallest : 1);
  return bars.render();
}

/// The secondary sections' ECD distribution per trial (from each trial's particles.csv).
std::string size_plot(const std::string& out, const ScreenData& d) {
  const TrialsConfig& tc = d.tc;
  SvgPlot sizes(560, 320, "secondary particle sizes (ECD) per trial", "ECD (µm)", "share of particles per bin");
  for (size_t i = 0; i < tc.trials.size(); ++i) {
    std::ifstream in(out + "/" + tc.trials[i].label + "/particles.csv");
    std::vector<double> d;
    for (std::string line; std::getline(in, line);) {
      if (line.empty() || line[0] == '#' || line.rfind("id,", 0) == 0) continue;
      std::vector<std::string> f;
      std::stringstream ss(line);
      for (std::string item; std::getline(ss, item, ',');) f.push_back(item);
      if (f.size() > 12 && f[1] == "secondary" && f[12] == "0") d.push_back(std::stod(f[4]));
    }
    if (d.empty()) continue;
    const int bins = 15;
    const double w = 0.4 / bins;
    std::vector<double> x, y(bins, 0.0);
    for (int b = 0; b < bins; ++b) x.push_back((b + 0.5) * w);
    for (double v : d) y[std::min(bins - 1, static_cast<int>(v / w))] += 1.0 / d.size();
    sizes.line(x, y, kColours[i % 6], tc.trials[i].label);
  }
  return sizes.render();
}

/// The coarsening fit per temperature: mean radiusⁿ against time with the fit lines.
std::string coarsening_plot(const ScreenData& d) {
  const TrialsConfig& tc = d.tc;
  const auto& by_temperature = d.kin.by_temperature;
  const auto& fits = d.kin.fits;
  const auto& kinetic_radius = d.kin.kinetic_radius;
  SvgPlot power(560, 320, "coarsening: mean radiusⁿ against time (fit lines)", "ageing time (h)", "⟨r⟩ⁿ (µmⁿ)");
  int ci = 0;
  for (const auto& [temp, idx] : by_temperature) {
    if (!fits.count(temp)) continue;
    const CoarseningFit& f = fits.at(temp);
    std::vector<double> t, y;
    double tmax = 0;
    for (size_t i : idx) {
      const double r = kinetic_radius[i];
      if (!(r > 0)) continue;
      t.push_back(tc.trials[i].time_h), y.push_back(std::pow(r, f.exponent));
      tmax = std::max(tmax, tc.trials[i].time_h);
    }
    power.markers(t, y, kColours[ci % 6], format_number("%g °C", temp) + ", n = " + format_number("%.3g", f.exponent));
    power.line({0, tmax}, {f.r0_pow_n, f.r0_pow_n + f.k * tmax}, kColours[ci % 6], "", true);
    ++ci;
  }
  return power.render();
}

ScreenPlots write_screen_plots(const std::string& out, const ScreenData& d) {
  const ScreenPlots plots{fraction_plot(d), class_plot(d), size_plot(out, d), coarsening_plot(d)};
  write_text_atomically(out + "/fraction_vs_time.svg", plots.fraction);
  write_text_atomically(out + "/class_fractions.svg", plots.classes);
  write_text_atomically(out + "/size_distributions.svg", plots.sizes);
  write_text_atomically(out + "/coarsening.svg", plots.coarsening);
  return plots;
}

/// The screen's report page: failures, the ranking, the truth beside it, the kinetics, the charts.
void write_screen_report(const std::string& out, const ScreenData& d, const ScreenOutcome& outcome,
                         const ScreenPlots& plots) {
  const TrialsConfig& tc = d.tc;
  const std::vector<TrialNumbers>& numbers = d.numbers;
  const std::vector<Ranked>& ranking = d.ranking;
  const auto& truth = d.truth;
  const auto& truth_ranking = d.truth_ranking;
  const auto& [by_temperature, kinetics, arrhenius, fits, fits_3d, kinetic_radius] = d.kin;
  std::ostringstream h;
  h << html_page_head(tc.title) << "<h1>" << xml_escape(tc.title) << "</h1>\n";
  for (const auto& [label, error] : outcome.failed)
    h << "<p style=\"border:1px solid #c60;background:#fff4e5;padding:6px\"><b>Trial " << xml_escape(label)
      << " failed and is not compared:</b> " << xml_escape(error) << "</p>\n";
  h << "<h2>Ranking against the target</h2><table><tr><th>rank</th><th>trial</th>"
    << "<th>ordered fraction (95 % CI)</th><th>secondary mean section ECD, all sections (µm, 95 % CI)</th>"
       "<th>primary fraction</th><th>verdict</th></tr>";
  for (size_t k = 0; k < ranking.size(); ++k) {
    const size_t i = ranking[k].trial;
    std::string verdict = ranking[k].verdict == Verdict::inside      ? "inside the target window"
                          : ranking[k].verdict == Verdict::undecided ? "undecided: "
                                                                     : "outside: ";
    for (size_t m = 0; m < ranking[k].reasons.size(); ++m) verdict += (m ? "; " : "") + ranking[k].reasons[m];
    for (const auto& flag : ranking[k].flags) verdict += " [" + flag + "]";
    const Measured& ecd = numbers[i].secondary_mean_ecd_um;
    h << "<tr><td>" << k + 1 << "</td><td><a href=\"" << xml_escape(tc.trials[i].label) << "/report.html\">"
      << xml_escape(tc.trials[i].label) << "</a></td><td>" << format_number("%.3f", numbers[i].ordered_fraction.value)
      << " (" << format_number("%.3f", numbers[i].ordered_fraction.low) << " – "
      << format_number("%.3f", numbers[i].ordered_fraction.high) << ")</td><td>" << format_number("%.3f", ecd.value)
      << (numbers[i].secondary_size_from_fit
              ? " (" + format_number("%.3f", ecd.low) + " – " + format_number("%.3f", ecd.high) + ")"
              : std::string(" (resolved sections only)"))
      << "</td><td>" << format_number("%.3f", numbers[i].primary_fraction) << " (" << numbers[i].primary_count
      << " counted)</td><td>" << xml_escape(verdict) << "</td></tr>";
  }
  h << "</table><p class=\"caution\">Undecided: a quantity's 95 % interval crosses an edge of the window; undecided "
       "trials rank below the trials decided inside and above those decided outside. Classes with fewer than "
    << kFewParticles << " counted particles are flagged.</p>\n";
  write_truth_table(h, tc, numbers, ranking, truth, truth_ranking);
  h << "<h2>Coarsening kinetics</h2><table><tr><th>temperature (°C)</th><th>n</th>"
       "<th>k (µmⁿ/h)</th><th>k 95 % CI</th><th>radius</th></tr>";
  for (const auto& [temp, f] : fits)
    h << "<tr><td>" << format_number("%g", temp) << "</td><td>" << format_number("%.3g", f.exponent)
      << (tc.exponent ? " (set)"
                      : " (fitted " + format_number("%.3g", f.exponent_low) + "–" +
                            format_number("%.3g", f.exponent_high) + ")")
      << "</td><td>" << format_number("%.4g", f.k) << "</td><td>"
      << (std::isfinite(f.k_low) ? format_number("%.4g", f.k_low) + " – " + format_number("%.4g", f.k_high)
                                 : std::string("needs 3 or more trials"))
      << "</td><td>" << (fits_3d.at(temp) ? "3-D mean radius" : "resolved sections' mean radius (not 3-D)")
      << "</td></tr>";
  h << "</table><p class=\"caution\">Fitted to ⟨r⟩ⁿ − ⟨r0⟩ⁿ = k t on the 3-D mean radius of the secondary "
       "particles (the fit preferred by AIC, log-normal or LSW, to the sections truncated at each map's detection "
       "limit) where every trial of the "
       "temperature has it, else on the mean radius of the resolved sections, which is neither 3-D nor free of the "
       "truncation; "
       "n = 3 is the Lifshitz–Slyozov–Wagner law, but binary Ni–Al γ′ has been reported with n below 3, so set or fit "
       "n "
       "for your alloy. With two or more temperatures an Arrhenius fit gives an apparent activation energy (k also "
       "carries the 1/T prefactor and the solubility terms).</p>\n";
  if (!arrhenius.is_null())
    h << "<p>Arrhenius: Q = " << format_number("%.4g", arrhenius["activation_energy_kj_mol"].get<double>())
      << " kJ/mol.</p>";
  h << "<div class=\"plots\">" << plots.fraction << plots.classes << plots.sizes << plots.coarsening << "</div>\n";
  h << "<p>Tables: <code>comparison.csv</code>, <code>comparison.json</code>. Each trial's own report is linked in the "
       "ranking.</p><p class=\"caution\">Results are for research and screening. Qualification of safety-critical "
       "parts "
       "follows the applicable material specifications, accredited testing and licensed "
       "practice.</p>\n</body></html>\n";
  write_text_atomically(out + "/report.html", h.str());
}

}  // namespace

ScreenOutcome run_screen(const std::string& trials_path, const std::string& out, const MapRunOptions& run, bool quiet) {
  ScreenOutcome outcome;
  std::vector<nlohmann::json> summaries;
  TrialsConfig tc = map_trials(trials_path, out, run, quiet, outcome, summaries);
  const ScreenData d = compare_trials(std::move(tc), std::move(summaries));
  write_comparison(out, d, outcome);
  const ScreenPlots plots = write_screen_plots(out, d);
  write_screen_report(out, d, outcome, plots);
  outcome.report = out + "/report.html";
  return outcome;
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
    const ScreenOutcome r = run_screen(o->trials, o->out, o->run, o->quiet);
    std::printf("report: %s\n", r.report.c_str());
    if (!r.failed.empty())
      std::fprintf(stderr, "orderband screen: %zu of the trials failed (listed in the report and comparison.json)\n",
                   r.failed.size());
    return r.failed.empty() ? 0 : 1;
  };
}

}  // namespace orderband::cli
