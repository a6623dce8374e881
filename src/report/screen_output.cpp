// The outputs of `screen`: comparison tables, charts and the report page.
#include "screen_output.hpp"

#include <algorithm>
#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/atomic_file.hpp"
#include "orderband/html_page.hpp"
#include "orderband/svg_plot.hpp"
#include "orderband/version.hpp"

namespace orderband {
namespace {

nlohmann::json finite_or_null(double v) { return std::isfinite(v) ? nlohmann::json(v) : nlohmann::json(nullptr); }

/// The comparison's view of a screen: trials, their summaries and what was compared.
struct ScreenView {
  const TrialsConfig& tc;
  const std::vector<TrialSummary>& summaries;
  const ScreenComparison& c;
};

/// The truth beside the measurement for synthetic trials: values, verdicts and ranks.
void write_truth_table(std::ostream& h, const ScreenView& v) {
  if (v.c.truth_ranking.empty()) return;
  h << "<h2>Truth beside measurement (synthetic trials)</h2><table><tr><th>trial</th><th>ordered fraction, "
       "truth / measured</th><th>secondary mean section ECD (µm), truth (all sections) / measured</th><th>primary "
       "fraction, truth / measured</th><th>verdict, truth / measured</th><th>rank, truth / measured</th></tr>";
  for (size_t i = 0; i < v.c.numbers.size(); ++i) {
    if (!v.c.truth[i]) continue;
    const TrialNumbers &t = *v.c.truth[i], &m = v.c.numbers[i];
    const auto [t_rank, t_entry] = place_in(v.c.truth_ranking, i);
    const auto [m_rank, m_entry] = place_in(v.c.ranking, i);
    h << "<tr><td>" << xml_escape(v.tc.trials[i].label) << "</td><td>"
      << format_number("%.3f", t.ordered_fraction.value) << " / " << format_number("%.3f", m.ordered_fraction.value)
      << "</td><td>" << format_number("%.3f", t.secondary_mean_ecd_um.value) << " / "
      << format_number("%.3f", m.secondary_mean_ecd_um.value) << "</td><td>"
      << format_number("%.3f", t.primary_fraction) << " / " << format_number("%.3f", m.primary_fraction) << "</td><td>"
      << to_string(t_entry ? t_entry->verdict : Verdict::outside) << " / "
      << to_string(m_entry ? m_entry->verdict : Verdict::outside) << "</td><td>" << t_rank << " / " << m_rank
      << "</td></tr>";
  }
  h << "</table>\n";
}

nlohmann::json kinetics_json(const ScreenComparison& c, const TrialsConfig& tc) {
  nlohmann::json kinetics = nlohmann::json::array();
  for (const TemperatureKinetics& t : c.kinetics) {
    nlohmann::json k = {{"temperature_c", t.temperature_c},
                        {"trials", t.fitted_trials},
                        {"radius", t.three_d ? "3-D mean radius (the fit preferred by AIC, log-normal or LSW, to "
                                               "the sections truncated at the detection limit)"
                                             : "mean radius of the resolved sections (not 3-D; biased by truncation)"}};
    if (t.fit) {
      const CoarseningFit& f = *t.fit;
      k["exponent"] = f.exponent;
      k["exponent_ci95"] = {f.exponent_low, f.exponent_high};
      k["exponent_fitted"] = !tc.exponent.has_value();
      k["k_um_pow_n_per_h"] = f.k;
      k["k_ci95"] = {finite_or_null(f.k_low), finite_or_null(f.k_high)};
      k["k_ci95_from"] = f.k_interval_from_radius_errors
                             ? "the 3-D means' own intervals, widened by the Birge ratio where the trials scatter more"
                             : "the trials' scatter about the line (Student's t)";
      k["r0_pow_n_um_pow_n"] = f.r0_pow_n;
    } else {
      k["note"] = t.note;
    }
    kinetics.push_back(k);
  }
  return kinetics;
}

nlohmann::json arrhenius_json(const ScreenComparison& c) {
  if (!c.arrhenius) return nullptr;
  return {
      {"activation_energy_kj_mol", c.arrhenius->activation_kj_mol},
      {"ci95", {finite_or_null(c.arrhenius->q_low), finite_or_null(c.arrhenius->q_high)}},
      {"caution", "k also carries the 1/T prefactor and the solubility of the rate law, so Q is an apparent value"}};
}

/// One trial's row of comparison.csv.
void write_csv_row(std::ostream& csv, const Trial& t, const TrialSummary& s, size_t rank, const Ranked* r) {
  csv << t.label << ',' << t.temperature_c << ',' << t.time_h << ',' << format_number("%.5f", s.ordered_fraction.value)
      << ',' << format_number("%.5f", s.ordered_fraction.low) << ',' << format_number("%.5f", s.ordered_fraction.high)
      << ','
      << (std::isfinite(s.subresolution_ordered_fraction) ? format_number("%.5f", s.subresolution_ordered_fraction)
                                                          : std::string())
      << ',' << format_number("%.5f", s.primary.area_fraction) << ','
      << format_number("%.5f", s.secondary.area_fraction) << ',' << s.secondary.count << ','
      << format_number("%.5f", s.secondary.mean_ecd_um) << ','
      << format_number("%.5f", s.secondary.number_density_per_um2) << ',' << rank << ','
      << format_number("%.4f", r ? r->distance : 0.0) << ',' << (r ? to_string(r->verdict) : "") << '\n';
}

/// One trial's record of comparison.json (its summary's class table and 3-D fits as they are).
nlohmann::json trial_json(const ScreenView& v, size_t i, const nlohmann::json& s) {
  const Trial& t = v.tc.trials[i];
  const TrialNumbers& n = v.c.numbers[i];
  const auto [rank, r] = place_in(v.c.ranking, i);
  nlohmann::json j = {
      {"label", t.label},
      {"temperature_c", t.temperature_c},
      {"time_h", t.time_h},
      {"notes", t.notes},
      {"ordered_area_fraction", s["ordered_area_fraction"]},
      {"ci95", s["ci95"]},
      {"ci95_bootstrap", s["ci95_bootstrap"]},
      {"subresolution_ordered_fraction",
       s.value("subresolution_measured", true) ? s["subresolution_ordered_fraction"] : nlohmann::json(nullptr)},
      {"subresolution_measured", s.value("subresolution_measured", true)},
      {"classes", s["classes"]},
      {"rank", rank},
      {"distance_to_target", r ? r->distance : 0.0},
      {"verdict", r ? to_string(r->verdict) : ""},
      {"flags", r ? nlohmann::json(r->flags) : nlohmann::json::array()},
      {"secondary_mean_section_ecd_um",
       {{"value", n.secondary_mean_ecd_um.value},
        {"ci95", {n.secondary_mean_ecd_um.low, n.secondary_mean_ecd_um.high}},
        {"from_3d_fit", n.secondary_size_from_fit}}},
      {"secondary_3d", s["secondary_3d"]},
      {"report", t.label + "/report.html"}};
  if (v.c.truth[i]) {
    nlohmann::json tj = {{"ordered_area_fraction", v.c.truth[i]->ordered_fraction.value},
                         {"secondary_mean_section_ecd_um", v.c.truth[i]->secondary_mean_ecd_um.value},
                         {"primary_area_fraction", v.c.truth[i]->primary_fraction}};
    if (const auto [t_rank, t_entry] = place_in(v.c.truth_ranking, i); t_entry)
      tj["rank"] = t_rank, tj["verdict"] = to_string(t_entry->verdict);
    j["truth"] = tj;
  }
  return j;
}

/// comparison.csv and comparison.json.
void write_comparison(const std::string& out, const ScreenView& v, const ScreenRun& run,
                      const std::vector<std::string>& summary_texts, const std::string& command_line) {
  std::ostringstream csv;
  csv << "# orderband " << kVersion << ": " << command_line << "\n"
      << "label,temperature_c,time_h,ordered_area_fraction,ci95_low,ci95_high,subresolution_ordered_fraction,"
         "primary_area_fraction,secondary_area_fraction,secondary_count,secondary_mean_ecd_um,"
         "secondary_number_density_per_um2,rank,distance_to_target,verdict\n";
  nlohmann::json table = nlohmann::json::array();
  for (size_t i = 0; i < v.tc.trials.size(); ++i) {
    const auto [rank, r] = place_in(v.c.ranking, i);
    write_csv_row(csv, v.tc.trials[i], v.summaries[i], rank, r);
    table.push_back(trial_json(v, i, nlohmann::json::parse(summary_texts[i])));
  }
  write_text_atomically(out + "/comparison.csv", csv.str());
  nlohmann::json j = {{"tool", "orderband"},
                      {"version", kVersion},
                      {"command_line", command_line},
                      {"trials_file", v.tc.path},
                      {"title", v.tc.title},
                      {"trials", table},
                      {"kinetics", kinetics_json(v.c, v.tc)},
                      {"arrhenius", arrhenius_json(v.c)}};
  nlohmann::json rk = nlohmann::json::array();
  for (const Ranked& r : v.c.ranking)
    rk.push_back({{"label", v.tc.trials[r.trial].label},
                  {"verdict", to_string(r.verdict)},
                  {"distance", r.distance},
                  {"reasons", r.reasons},
                  {"flags", r.flags}});
  j["ranking"] = rk;
  nlohmann::json failed = nlohmann::json::array();
  for (const auto& [label, error] : run.failed) failed.push_back({{"label", label}, {"error", error}});
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
std::string fraction_plot(const ScreenView& v) {
  SvgPlot frac(560, 320, "ordered area fraction vs ageing time (95 % CI)", "ageing time (h)", "ordered area fraction");
  int ci = 0;
  for (const TemperatureKinetics& k : v.c.kinetics) {
    std::vector<double> t, f, lo, hi;
    for (size_t i : k.trials) {
      const Measured& m = v.summaries[i].ordered_fraction;
      t.push_back(v.tc.trials[i].time_h), f.push_back(m.value), lo.push_back(m.low), hi.push_back(m.high);
    }
    frac.error_bars(t, lo, hi, kColours[ci % 6]);
    frac.markers(t, f, kColours[ci % 6], format_number("%g °C", k.temperature_c));
    ++ci;
  }
  return frac.render();
}

/// The area fraction per size class, bars per trial.
std::string class_plot(const ScreenView& v) {
  SvgPlot bars(560, 320, "area fraction per size class", "trial", "area fraction");
  const size_t n = v.tc.trials.size();
  const std::vector<std::string> class_names{"secondary", "primary"};
  double tallest = 0;
  for (size_t c = 0; c < class_names.size(); ++c) {
    std::vector<double> left, width, height;
    for (size_t i = 0; i < n; ++i) {
      const TrialSummary& s = v.summaries[i];
      left.push_back(i - 0.35 + 0.35 * c), width.push_back(0.33);
      height.push_back(c == 0 ? s.secondary.area_fraction : s.primary.area_fraction);
      tallest = std::max(tallest, height.back());
    }
    bars.bars(left, width, height, kColours[c], class_names[c]);
  }
  std::vector<std::string> labels;
  for (const Trial& t : v.tc.trials) labels.push_back(t.label);
  bars.x_categories(labels);
  bars.x_range(-0.7, n - 0.3);
  // Headroom above the tallest bar for the legend (top right), so that it never covers a bar.
  bars.y_range(0, tallest > 0 ? 1.3 * tallest : 1);
  return bars.render();
}

/// One trial's secondary section diameters (µm) from its particles.csv (counted particles only).
std::vector<double> secondary_diameters(const std::string& particles_csv) {
  std::ifstream in(particles_csv);
  std::vector<double> d;
  for (std::string line; std::getline(in, line);) {
    if (line.empty() || line[0] == '#' || line.rfind("id,", 0) == 0) continue;
    std::vector<std::string> f;
    std::stringstream ss(line);
    for (std::string item; std::getline(ss, item, ',');) f.push_back(item);
    if (f.size() > 12 && f[1] == "secondary" && f[12] == "0") d.push_back(std::stod(f[4]));
  }
  return d;
}

/// The secondary sections' ECD distribution per trial (from each trial's particles.csv).
std::string size_plot(const std::string& out, const ScreenView& v) {
  SvgPlot sizes(560, 320, "secondary particle sizes (ECD) per trial", "ECD (µm)", "share of particles per bin");
  for (size_t i = 0; i < v.tc.trials.size(); ++i) {
    const std::vector<double> d = secondary_diameters(out + "/" + v.tc.trials[i].label + "/particles.csv");
    if (d.empty()) continue;
    const int bins = 15;
    const double w = 0.4 / bins;
    std::vector<double> x, y(bins, 0.0);
    for (int b = 0; b < bins; ++b) x.push_back((b + 0.5) * w);
    for (double e : d) y[std::min(bins - 1, static_cast<int>(e / w))] += 1.0 / d.size();
    sizes.line(x, y, kColours[i % 6], v.tc.trials[i].label);
  }
  return sizes.render();
}

/// The coarsening fit per temperature: mean radiusⁿ against time with the fit lines.
std::string coarsening_plot(const ScreenView& v) {
  SvgPlot power(560, 320, "coarsening: mean radiusⁿ against time (fit lines)", "ageing time (h)", "⟨r⟩ⁿ (µmⁿ)");
  int ci = 0;
  for (const TemperatureKinetics& k : v.c.kinetics) {
    if (!k.fit) continue;
    const CoarseningFit& f = *k.fit;
    std::vector<double> t, y;
    double tmax = 0;
    for (size_t i : k.trials) {
      const double r = v.c.kinetic_radius[i];
      if (!(r > 0)) continue;
      t.push_back(v.tc.trials[i].time_h), y.push_back(std::pow(r, f.exponent));
      tmax = std::max(tmax, v.tc.trials[i].time_h);
    }
    power.markers(t, y, kColours[ci % 6],
                  format_number("%g °C", k.temperature_c) + ", n = " + format_number("%.3g", f.exponent));
    power.line({0, tmax}, {f.r0_pow_n, f.r0_pow_n + f.k * tmax}, kColours[ci % 6], "", true);
    ++ci;
  }
  return power.render();
}

ScreenPlots write_screen_plots(const std::string& out, const ScreenView& v) {
  const ScreenPlots plots{fraction_plot(v), class_plot(v), size_plot(out, v), coarsening_plot(v)};
  write_text_atomically(out + "/fraction_vs_time.svg", plots.fraction);
  write_text_atomically(out + "/class_fractions.svg", plots.classes);
  write_text_atomically(out + "/size_distributions.svg", plots.sizes);
  write_text_atomically(out + "/coarsening.svg", plots.coarsening);
  return plots;
}

/// A ranking entry's verdict in words, with its reasons and flags.
std::string verdict_text(const Ranked& r) {
  std::string verdict = r.verdict == Verdict::inside      ? "inside the target window"
                        : r.verdict == Verdict::undecided ? "undecided: "
                                                          : "outside: ";
  for (size_t m = 0; m < r.reasons.size(); ++m) verdict += (m ? "; " : "") + r.reasons[m];
  for (const auto& flag : r.flags) verdict += " [" + flag + "]";
  return verdict;
}

/// Which trials' ordered fractions leave out ordering finer than the beam (their sub-resolution
/// fraction not measured: the learned estimator's zero is each grain's matrix); empty if none.
std::string subresolution_note(const ScreenView& v) {
  std::string labels;
  for (size_t i = 0; i < v.tc.trials.size(); ++i)
    if (std::isnan(v.summaries[i].subresolution_ordered_fraction))
      labels += (labels.empty() ? "" : ", ") + v.tc.trials[i].label;
  if (labels.empty()) return "";
  return "<p class=\"caution\">Ordered fractions of " + xml_escape(labels) +
         ": ordering finer than the beam inside the matrix (tertiary γ′) is not in them. The learned estimator took "
         "each grain's matrix as its zero, so a trial's tertiary share reads as matrix (about 0.035 of area at 5 % "
         "tertiary); a reference region free of γ′ in the scan's [fraction] table sets that zero.</p>\n";
}

void write_ranking_table(std::ostream& h, const ScreenView& v) {
  h << "<h2>Ranking against the target</h2><table><tr><th>rank</th><th>trial</th>"
    << "<th>ordered fraction (95 % CI)</th><th>secondary mean section ECD, all sections (µm, 95 % CI)</th>"
       "<th>primary fraction</th><th>verdict</th></tr>";
  for (size_t k = 0; k < v.c.ranking.size(); ++k) {
    const size_t i = v.c.ranking[k].trial;
    const TrialNumbers& n = v.c.numbers[i];
    const Measured& ecd = n.secondary_mean_ecd_um;
    const std::string& label = v.tc.trials[i].label;
    h << "<tr><td>" << k + 1 << "</td><td><a href=\"" << xml_escape(label) << "/report.html\">" << xml_escape(label)
      << "</a></td><td>" << format_number("%.3f", n.ordered_fraction.value) << " ("
      << format_number("%.3f", n.ordered_fraction.low) << " – " << format_number("%.3f", n.ordered_fraction.high)
      << ")</td><td>" << format_number("%.3f", ecd.value)
      << (n.secondary_size_from_fit
              ? " (" + format_number("%.3f", ecd.low) + " – " + format_number("%.3f", ecd.high) + ")"
              : std::string(" (resolved sections only)"))
      << "</td><td>" << format_number("%.3f", n.primary_fraction) << " (" << n.primary_count << " counted)</td><td>"
      << xml_escape(verdict_text(v.c.ranking[k])) << "</td></tr>";
  }
  h << "</table><p class=\"caution\">Undecided: a quantity's 95 % interval crosses an edge of the window; undecided "
       "trials rank below the trials decided inside and above those decided outside. Classes with fewer than "
    << kFewParticles << " counted particles are flagged.</p>\n"
    << subresolution_note(v);
}

void write_kinetics_table(std::ostream& h, const ScreenView& v) {
  h << "<h2>Coarsening kinetics</h2><table><tr><th>temperature (°C)</th><th>n</th>"
       "<th>k (µmⁿ/h)</th><th>k 95 % CI</th><th>radius</th></tr>";
  for (const TemperatureKinetics& k : v.c.kinetics) {
    if (!k.fit) continue;
    const CoarseningFit& f = *k.fit;
    h << "<tr><td>" << format_number("%g", k.temperature_c) << "</td><td>" << format_number("%.3g", f.exponent)
      << (v.tc.exponent ? " (set)"
                        : " (fitted " + format_number("%.3g", f.exponent_low) + "–" +
                              format_number("%.3g", f.exponent_high) + ")")
      << "</td><td>" << format_number("%.4g", f.k) << "</td><td>"
      << (std::isfinite(f.k_low) ? format_number("%.4g", f.k_low) + " – " + format_number("%.4g", f.k_high) +
                                       (f.k_interval_from_radius_errors ? " (radii's intervals)" : " (scatter)")
                                 : std::string("needs 3 or more trials"))
      << "</td><td>" << (k.three_d ? "3-D mean radius" : "resolved sections' mean radius (not 3-D)") << "</td></tr>";
  }
  h << "</table><p class=\"caution\">Fitted to ⟨r⟩ⁿ − ⟨r0⟩ⁿ = k t on the 3-D mean radius of the secondary "
       "particles (the fit preferred by AIC, log-normal or LSW, to the sections truncated at each map's detection "
       "limit) where every trial of the temperature has it, else on the mean radius of the resolved sections, which "
       "is neither 3-D nor free of the truncation; n = 3 is the Lifshitz–Slyozov–Wagner law, but binary Ni–Al γ′ has "
       "been reported with n below 3, so set or fit n for your alloy. With two or more temperatures an Arrhenius fit "
       "gives an apparent activation energy (k also carries the 1/T prefactor and the solubility terms). k's "
       "interval carries the 3-D means' own intervals through the fit, widened by the Birge ratio √(χ²/(m − 2)) "
       "where the trials scatter about the line more than those say; where a trial has none, it comes from the "
       "scatter alone (Student's t), which with three trials has one degree of freedom.</p>\n";
  if (v.c.arrhenius)
    h << "<p>Arrhenius: Q = " << format_number("%.4g", v.c.arrhenius->activation_kj_mol) << " kJ/mol.</p>";
}

/// The screen's report page: failures, the ranking, the truth beside it, the kinetics, the charts.
void write_screen_report(const std::string& out, const ScreenView& v, const ScreenRun& run, const ScreenPlots& plots) {
  std::ostringstream h;
  h << html_page_head(v.tc.title) << "<h1>" << xml_escape(v.tc.title) << "</h1>\n";
  for (const auto& [label, error] : run.failed)
    h << "<p style=\"border:1px solid #c60;background:#fff4e5;padding:6px\"><b>Trial " << xml_escape(label)
      << " failed and is not compared:</b> " << xml_escape(error) << "</p>\n";
  write_ranking_table(h, v);
  write_truth_table(h, v);
  write_kinetics_table(h, v);
  h << "<div class=\"plots\">" << plots.fraction << plots.classes << plots.sizes << plots.coarsening << "</div>\n";
  h << "<p>Tables: <code>comparison.csv</code>, <code>comparison.json</code>. Each trial's own report is linked in the "
       "ranking.</p><p class=\"caution\">Results are for research and screening. Qualification of safety-critical "
       "parts follows the applicable material specifications, accredited testing and licensed practice.</p>\n"
       "</body></html>\n";
  write_text_atomically(out + "/report.html", h.str());
}

}  // namespace

void write_screen_outputs(const std::string& out, const ScreenRun& run, const std::vector<std::string>& summary_texts,
                          const std::string& command_line) {
  const ScreenView v{run.trials, run.summaries, run.comparison};
  write_comparison(out, v, run, summary_texts, command_line);
  const ScreenPlots plots = write_screen_plots(out, v);
  write_screen_report(out, v, run, plots);
}

}  // namespace orderband
