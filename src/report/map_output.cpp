// Outputs of `map`: maps, tables, summary, plots and the report page.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/atomic_file.hpp"
#include "orderband/electron.hpp"
#include "orderband/error.hpp"
#include "orderband/html_page.hpp"
#include "orderband/input_hash.hpp"
#include "orderband/map_image.hpp"
#include "orderband/map_output.hpp"
#include "orderband/mismatch_systematic.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/orient_output.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/results_file.hpp"
#include "orderband/svg_plot.hpp"
#include "orderband/text_file.hpp"
#include "orderband/truth_comparison.hpp"
#include "orderband/units.hpp"
#include "orderband/version.hpp"

namespace fs = std::filesystem;

namespace orderband {
namespace {

/// The learned estimator places every grain's matrix at zero unless reference regions set it: ordering
/// finer than the beam in the matrix is then counted as matrix, its sub-resolution fraction ≈ 0 by
/// construction, not measured.
bool subresolution_measured(const MapResults& r) { return !r.fraction.zero_is_matrix; }

/// The fraction maps' size: about 480 image pixels along the longer side.
constexpr double kMapSidePx = 480;

std::string base64(const std::string& bytes) {
  static const char* t = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  std::string out;
  size_t i = 0;
  for (; i + 2 < bytes.size(); i += 3) {
    const uint32_t v = (uint8_t(bytes[i]) << 16) | (uint8_t(bytes[i + 1]) << 8) | uint8_t(bytes[i + 2]);
    out += t[v >> 18], out += t[(v >> 12) & 63], out += t[(v >> 6) & 63], out += t[v & 63];
  }
  if (i + 1 == bytes.size()) {
    const uint32_t v = uint8_t(bytes[i]) << 16;
    out += t[v >> 18], out += t[(v >> 12) & 63], out += "==";
  } else if (i + 2 == bytes.size()) {
    const uint32_t v = (uint8_t(bytes[i]) << 16) | (uint8_t(bytes[i + 1]) << 8);
    out += t[v >> 18], out += t[(v >> 12) & 63], out += t[(v >> 6) & 63], out += '=';
  }
  return out;
}

/// The model-mismatch systematic of the area fraction for the estimator that ran (none where
/// reference regions or a mixture fit set the end members, or for the window estimator).
MismatchSystematic systematic_of(const MapResults& r, const MapOptions& o) {
  return mismatch_systematic_of_run(r.fraction.estimator, o.fraction.end_members != EndMemberMode::model);
}

std::string systematic_row(const MapResults& r, const MapOptions& o) {
  const MismatchSystematic sys = systematic_of(r, o);
  if (!std::isfinite(sys.rms)) return "";
  return "<tr><td>systematic uncertainty (model mismatch)</td><td>± " + format_number("%.3f", sys.rms) +
         " (RMS area error over " + std::to_string(sys.variants * sys.layouts) +
         " synthetic scans: " + std::to_string(sys.variants) + " renderer variants the estimator is not told, " +
         std::to_string(sys.layouts) + " layouts each; largest " + format_number("%.3f", sys.largest) +
         "; within ±0.03 on " + std::to_string(sys.within_003) +
         "). Common to every scan analysed alike; real, dynamical patterns may differ more." +
         (r.fraction.estimator == "learned"
              ? std::string()
              : " The learned estimator (--estimator learned) holds ± " +
                    format_number("%.3f", mismatch_systematic("learned").rms) + " over the same scans.") +
         "</td></tr>";
}

RgbImage fraction_map_image(const ScanGrid& grid, const std::vector<float>& f) {
  const MapCanvas canvas(grid, pixels_per_step(grid, kMapSidePx));
  std::vector<Colour> colours(grid.count());
  for (size_t k = 0; k < grid.count(); ++k)
    colours[k] = std::isfinite(f[k]) ? sequential_colour(f[k]) : Colour{128, 128, 128};
  const RgbImage map = with_scale_bar(draw_point_colours(canvas, colours), canvas.pixels_per_um);
  return side_by_side(map, colour_bar(std::min(map.height - 28, 300), 0.0, 1.0, 5, "ordered fraction"));
}

RgbImage mask_image(const ScanGrid& grid, const MapResults& r) {
  const MapCanvas canvas(grid, pixels_per_step(grid, kMapSidePx));
  // Pattern quality (fundamental band contrast) as grey, ordered points tinted amber, particle outlines red.
  std::vector<float> q;
  for (float v : r.fraction.band_contrast)
    if (std::isfinite(v)) q.push_back(v);
  std::sort(q.begin(), q.end());
  const double lo = q.empty() ? 0 : q[q.size() / 100], hi = q.empty() ? 1 : q[q.size() * 99 / 100];
  std::vector<Colour> colours(grid.count());
  const auto& label = r.segmentation.label;
  for (size_t k = 0; k < grid.count(); ++k) {
    const float v = r.fraction.band_contrast[k];
    if (label[k] < 0 || !std::isfinite(v)) {
      colours[k] = {40, 60, 200};  // unusable: blue
      continue;
    }
    const double g = 40 + 200 * std::clamp((v - lo) / std::max(hi - lo, 1e-12), 0.0, 1.0);
    if (label[k] > 0) {
      bool edge = false;
      for (const GridPoint& nb : grid.neighbours(grid.point(k), 4)) edge = edge || label[grid.index(nb)] != label[k];
      const GridPoint p = grid.point(k);
      edge = edge || p.row == 0 || p.col == 0 || p.row == grid.rows - 1 || p.col == grid.cols - 1;
      colours[k] = edge ? Colour{220, 20, 20}
                        : Colour{static_cast<uint8_t>(std::min(255.0, g * 0.6 + 100)),
                                 static_cast<uint8_t>(g * 0.6 + 50), static_cast<uint8_t>(g * 0.25)};
    } else {
      const auto c = static_cast<uint8_t>(g);
      colours[k] = {c, c, c};
    }
  }
  return with_scale_bar(draw_point_colours(canvas, colours), canvas.pixels_per_um);
}

std::vector<std::string> band_profile_charts(const MapResults& r, const FractionSpec& spec) {
  // The superlattice families with the largest weights, model references of both phases.
  std::vector<const FamilyDiagnostic*> fams;
  for (const auto& f : r.fraction.families)
    if (f.superlattice) fams.push_back(&f);
  std::sort(fams.begin(), fams.end(), [](auto* a, auto* b) { return a->weight > b->weight; });
  if (fams.size() > 4) fams.resize(4);
  std::vector<std::string> out;
  for (const FamilyDiagnostic* f : fams) {
    SvgPlot p(420, 260, "band profile " + f->label + " (model, largest grain)", "offset from the plane / θ_B",
              "normalised intensity");
    p.vertical_band(-spec.windows.interior_max, spec.windows.interior_max, "#ffd27f", 0.45, "interior window");
    p.vertical_band(spec.windows.flank_min, spec.windows.flank_max, "#9fd3ff", 0.45, "flank windows");
    p.vertical_band(-spec.windows.flank_max, -spec.windows.flank_min, "#9fd3ff", 0.45);
    p.line(f->profile_u, f->profile_disordered, "#1f4fa8", "disordered (gamma)");
    p.line(f->profile_u, f->profile_ordered, "#c0392b", "ordered (gamma-prime)", true);
    out.push_back(p.render());
  }
  return out;
}

/// The learned estimator's ordering response per family beside the model's: the ordered −
/// disordered profile difference learned from the scan (pooled over grains) and the model's (at the
/// largest grain), each scaled to a largest magnitude of 1, for the three superlattice families of
/// largest weight and the strongest fundamental family. Empty without a learned response.
std::vector<std::string> learned_response_charts(const MapResults& r) {
  std::vector<const FamilyDiagnostic*> fams;
  for (const auto& f : r.fraction.families)
    if (f.superlattice && !f.learned_difference.empty()) fams.push_back(&f);
  std::sort(fams.begin(), fams.end(), [](auto* a, auto* b) { return a->weight > b->weight; });
  if (fams.size() > 3) fams.resize(3);
  for (const auto& f : r.fraction.families)
    if (!f.superlattice && !f.learned_difference.empty()) {
      fams.push_back(&f);
      break;
    }
  auto scaled = [](std::vector<double> v) {
    double largest = 0;
    for (double x : v)
      if (std::isfinite(x)) largest = std::max(largest, std::abs(x));
    if (largest > 0)
      for (double& x : v) x /= largest;
    return v;
  };
  std::vector<std::string> out;
  for (const FamilyDiagnostic* f : fams) {
    std::vector<double> model(f->profile_u.size());
    for (size_t b = 0; b < model.size(); ++b) model[b] = f->profile_ordered[b] - f->profile_disordered[b];
    SvgPlot p(420, 260, "ordering response " + f->label + (f->superlattice ? " (superlattice)" : " (fundamental)"),
              "offset from the plane / θ_B", "ordered − disordered (largest = 1)");
    p.line(f->profile_u, scaled(model), "#1f4fa8", "model (largest grain)", true);
    // Folded features (offsets ≥ 0, both sides of the band pooled) are drawn on both sides.
    std::vector<double> u = f->learned_u, d = scaled(f->learned_difference);
    if (!u.empty() && u.front() > 0) {
      std::vector<double> mirrored_u, mirrored_d;
      for (size_t b = u.size(); b-- > 0;) mirrored_u.push_back(-u[b]), mirrored_d.push_back(d[b]);
      u.insert(u.begin(), mirrored_u.begin(), mirrored_u.end()),
          d.insert(d.begin(), mirrored_d.begin(), mirrored_d.end());
    }
    p.line(u, d, "#c0392b", "learned from the scan");
    out.push_back(p.render());
  }
  return out;
}

/// The root mean square of v over its finite entries (0 where none).
double rms_of(const std::vector<double>& v) {
  double ss = 0, n = 0;
  for (double x : v)
    if (std::isfinite(x)) ss += x * x, n += 1;
  return n > 0 ? std::sqrt(ss / n) : 0.0;
}

/// The learned estimator's families: how much of the ordering response each family carries, learned
/// from the scan beside the model's (each the root mean square of the family's ordered − disordered
/// profile, as a share of the sum over the families; the model's from the reference profiles of
/// the largest grain). Where the data put the response on other families than the model does, the
/// model's intensities are not the data's.
std::vector<std::string> learned_family_chart(const MapResults& r) {
  std::vector<std::string> names;
  std::vector<double> learned, model;
  for (const auto& f : r.fraction.families) {
    if (f.learned_difference.empty()) continue;
    names.push_back(f.label + (f.superlattice ? "" : "f"));
    learned.push_back(rms_of(f.learned_difference));
    std::vector<double> d;
    for (size_t b = 0; b < f.profile_ordered.size() && b < f.profile_disordered.size(); ++b)
      d.push_back(f.profile_ordered[b] - f.profile_disordered[b]);
    model.push_back(rms_of(d));
  }
  for (std::vector<double>* v : {&learned, &model}) {
    double sum = 0;
    for (double x : *v) sum += x;
    for (double& x : *v) x = sum > 0 ? x / sum : 0.0;
  }
  const int k = static_cast<int>(names.size());
  std::vector<double> left_learned, left_model, width(names.size(), 0.4);
  for (int i = 0; i < k; ++i) left_learned.push_back(i - 0.4), left_model.push_back(i);
  SvgPlot p(std::min(900, std::max(420, 50 * k)), 260, "share of the ordering response by family (f: fundamental)",
            "family", "share (sums to 1)");
  p.bars(left_learned, width, learned, "#c0392b", "learned from the scan");
  p.bars(left_model, width, model, "#2e86ab", "model");
  p.x_categories(names);
  p.x_range(-0.8, k - 0.2);
  return {p.render()};
}

std::vector<std::string> diagnostics_charts(const MapResults& r) {
  if (r.fraction.estimator == "learned") return learned_family_chart(r);
  std::vector<std::string> names;
  std::vector<double> left, width, weight, sep;
  int k = 0;
  for (const auto& f : r.fraction.families) {
    if (!f.superlattice) continue;
    names.push_back(f.label);
    left.push_back(k - 0.4), width.push_back(0.4), weight.push_back(f.weight);
    ++k;
  }
  SvgPlot a(std::min(900, std::max(420, 60 * k)), 260, "weight of each superlattice family in the estimator", "family",
            "weight (sums to 1)");
  a.bars(left, width, weight, "#2e86ab", "weight");
  a.x_categories(names);
  a.x_range(-0.8, k - 0.2);
  std::vector<double> left2;
  for (double l : left) left2.push_back(l + 0.4);
  for (const auto& f : r.fraction.families)
    if (f.superlattice) sep.push_back(f.separation);
  SvgPlot b(std::min(900, std::max(420, 60 * k)), 260, "end-member separation per family (d' of one point)", "family",
            "d'");
  b.bars(left2, width, sep, "#e07a5f", "separation d'");
  b.x_categories(names);
  b.x_range(-0.8, k - 0.2);
  return {a.render(), b.render()};
}

std::string as_div(const std::vector<std::string>& charts) {
  std::string s = "<div class=\"plots\">";
  for (const auto& c : charts) s += c;
  return s + "</div>";
}

std::string histogram_svg(const MapResults& r, const SizeClasses& classes) {
  std::vector<double> d;
  for (const Particle2D& p : r.segmentation.particles)
    if (!p.touches_border) d.push_back(p.section_diameter_um);
  SvgPlot p(560, 300, "particle section diameters (border particles left out)", "section diameter (µm)", "particles");
  if (d.empty()) return p.render();
  const double dmax = *std::max_element(d.begin(), d.end()) * 1.05;
  const int bins = std::clamp(static_cast<int>(std::sqrt(double(d.size()))) + 3, 8, 40);
  const double w = dmax / bins;
  std::vector<double> left, width, count(bins, 0.0);
  for (int b = 0; b < bins; ++b) left.push_back(b * w), width.push_back(w * 0.95);
  for (double x : d) count[std::min(bins - 1, static_cast<int>(x / w))] += 1;
  p.bars(left, width, count, "#7a9e7e", "particles");
  if (classes.lower_um.back() < dmax) p.vertical_line(classes.lower_um.back(), "#555", "primary bound");
  if (r.detection.diameter_um < dmax) p.vertical_line(r.detection.diameter_um, "#c0392b", "detection limit");
  // Fitted log-normal per class, scaled to counts per bin.
  const char* colours[] = {"#8e44ad", "#c0392b", "#d35400", "#2c3e50"};
  for (size_t c = 0; c < r.classes.size(); ++c) {
    const ClassStats& s = r.classes[c];
    if (s.count < 3 || !(s.lognormal_sigma > 0)) continue;
    std::vector<double> xs, ys;
    for (int k = 1; k <= 200; ++k) {
      const double x = dmax * k / 200;
      const double pdf = std::exp(-0.5 * std::pow((std::log(x) - s.lognormal_mu) / s.lognormal_sigma, 2)) /
                         (x * s.lognormal_sigma * std::sqrt(2 * kPi));
      xs.push_back(x), ys.push_back(pdf * s.count * w);
    }
    p.line(xs, ys, colours[c % 4], "log-normal fit, " + s.name);
  }
  return p.render();
}

/// The class table (with the detection limit) and the secondary class's 3-D sizes.
void write_class_tables(std::ostream& h, const MapResults& r, const ScanConfig& config, const SizeClasses& classes) {
  const BeamFootprint beam = beam_footprint(config);
  h << "<h2>Size classes</h2><p>Detection limit: sections of at least <b>"
    << format_number("%.3f", r.detection.diameter_um) << " µm</b> diameter are counted (components of at least "
    << r.detection.min_points << " points; the matrix's noise, σ " << format_number("%.3f", r.detection.noise_sd)
    << " per point about " << format_number("%.3f", r.detection.matrix_level) << ", makes "
    << format_number("%.2f", r.detection.false_particles) << " such components per map; beam footprint σ "
    << format_number("%.0f", beam.sigma_x_um * 1e3) << " × " << format_number("%.0f", beam.sigma_y_um * 1e3)
    << " nm). At the limit " << format_number("%.0f", 100 * r.detection.detection_probability)
    << " % of isolated sections are found (simulated through the map's blur, noise and segmentation; half at "
    << format_number("%.3f", r.detection.half_found_um)
    << " µm). Sizes are section diameters: each particle's equivalent-circle diameter (ECD) taken back through "
       "that simulation's mean reading (noise points at a small section's edge make it read larger, the beam's "
       "blur smaller).</p>"
    << "<table><tr><th>class</th><th>rule</th><th>count</th><th>area fraction</th>"
       "<th>number density (µm⁻²)</th><th>mean section diameter (µm)</th><th>median section diameter "
       "(µm)</th></tr>";
  for (size_t k = 0; k < r.classes.size(); ++k) {
    const ClassStats& c = r.classes[k];
    const bool last = k + 1 == r.classes.size();
    const std::string rule =
        !c.counted ? (subresolution_measured(r) ? "ordering below the detection limit (area only)"
                                                : "ordering below the detection limit (area only; ordering finer "
                                                  "than the beam inside the matrix is not measured, the learned "
                                                  "estimator took the matrix as its zero)")
        : last
            ? "own orientation, on a grain boundary from " + format_number("%g", classes.boundary_share * c.lower_um) +
                  " µm, or from " + format_number("%g", c.lower_um) + " µm"
            : "every other resolved section";
    const bool few = c.counted && c.count < kFewParticles;
    h << "<tr><td>" << c.name << "</td><td>" << rule << "</td><td>" << (c.counted ? std::to_string(c.count) : "–")
      << (few ? " (too few for statistics)" : "") << "</td><td>" << format_number("%.4f", c.area_fraction)
      << "</td><td>" << (c.counted ? format_number("%.3f", c.number_density_per_um2) : "–") << "</td><td>"
      << (c.counted ? format_number("%.4f", c.mean_ecd_um) : "–") << "</td><td>"
      << (c.counted ? format_number("%.4f", c.median_ecd_um) : "–") << "</td></tr>";
  }
  h << "</table><p class=\"caution\">Particles touching the map border are counted in the area fractions but left "
       "out of counts, densities and sizes (guard frame). Section means are means of the resolved sections only; "
       "the 3-D sizes below account for the sections the map cannot resolve.</p>\n";
  h << "<h3>Secondary particles in 3-D (spheres assumed, sections truncated at the detection limit)</h3><table>"
       "<tr><th>model</th><th>sections</th><th>mean diameter (µm), 95 % CI</th><th>number density (µm⁻³), 95 % "
       "CI</th><th>share of sections resolved</th></tr>";
  for (const SphereSizeFit* f : {&r.secondary_lognormal, &r.secondary_lsw}) {
    const bool preferred = f == r.secondary_preferred();
    h << "<tr><td>" << to_string(f->model) << (preferred ? " (preferred: lower AIC)" : "") << "</td><td>" << f->sections
      << "</td>";
    if (f->determined)
      h << "<td>" << format_number("%.4f", f->mean_diameter_um) << " (" << format_number("%.4f", f->mean_low_um)
        << " – " << format_number("%.4f", f->mean_high_um) << ")</td><td>"
        << format_number("%.1f", f->number_density_per_um3) << " (" << format_number("%.1f", f->density_low_per_um3)
        << " – " << format_number("%.1f", f->density_high_per_um3) << ")</td><td>"
        << format_number("%.2f", f->seen_share) << "</td></tr>";
    else
      h << "<td colspan=\"3\">not determined: " << xml_escape(f->reason) << "</td></tr>";
  }
  h << "</table>\n";
}

/// summary.json: the detection limit and the secondary class's 3-D fits.
void add_size_statistics(nlohmann::json& j, const MapResults& r, const ScanConfig& config) {
  const BeamFootprint beam = beam_footprint(config);
  j["detection_limit"] = {{"section_diameter_um", r.detection.diameter_um},
                          {"min_points", r.detection.min_points},
                          {"noise_diameter_um", r.detection.noise_diameter_um},
                          {"noise_sd", r.detection.noise_sd},
                          {"matrix_level", r.detection.matrix_level},
                          {"false_particles_per_map", r.detection.false_particles},
                          {"detection_probability", r.detection.detection_probability},
                          {"half_found_diameter_um", r.detection.half_found_um},
                          {"transfer",
                           {{"true_diameter_um", r.detection.transfer.true_um},
                            {"mean_measured_ecd_um", r.detection.transfer.measured_um},
                            {"found_share", r.detection.transfer.found}}},
                          {"beam_sigma_x_um", beam.sigma_x_um},
                          {"beam_sigma_y_um", beam.sigma_y_um}};
  nlohmann::json sizes3d = nlohmann::json::object();
  for (const SphereSizeFit* f : {&r.secondary_lognormal, &r.secondary_lsw}) {
    nlohmann::json row = {{"determined", f->determined}, {"sections", f->sections}, {"reason", f->reason}};
    if (f->determined)
      row.update({{"parameters", f->spheres.params},
                  {"mean_diameter_um", f->mean_diameter_um},
                  {"mean_diameter_ci95_um", {f->mean_low_um, f->mean_high_um}},
                  {"number_density_per_um3", f->number_density_per_um3},
                  {"mean_section_diameter_um", f->mean_section_um},
                  {"mean_section_diameter_ci95_um", {f->mean_section_low_um, f->mean_section_high_um}},
                  {"number_density_ci95_per_um3", {f->density_low_per_um3, f->density_high_per_um3}},
                  {"share_of_sections_resolved", f->seen_share},
                  {"log_likelihood", f->log_likelihood},
                  {"aic", f->aic()}});
    sizes3d[to_string(f->model)] = row;
  }
  sizes3d["preferred"] = r.secondary_preferred() ? to_string(r.secondary_preferred()->model) : "";
  j["secondary_3d"] = sizes3d;
}

/// For a synthetic scan (truth.json and truth_particles.csv beside its description): the truth,
/// counted as map counts (sections in the field, off the border, at or above the detection limit,
/// and all of them), for summary.json; null otherwise.
nlohmann::json truth_beside(const ScanConfig& config, const MapResults& r) {
  const std::string json_path = config.folder + "/truth.json", csv_path = config.folder + "/truth_particles.csv";
  if (!fs::exists(json_path) || !fs::exists(csv_path)) return nullptr;
  const nlohmann::json t = nlohmann::json::parse(read_text_file(json_path, "truth"));
  const std::vector<TruthClassCount> counts =
      count_truth_sections(read_truth_sections(csv_path), config.grid, r.detection.diameter_um);
  nlohmann::json out = {{"file", json_path},
                        {"ordered_area_fraction", t.value("ordered_area_fraction", 0.0)},
                        {"subresolution_ordered_fraction", t.value("subresolution_ordered_fraction", 0.0)}};
  nlohmann::json classes = nlohmann::json::object();
  for (const TruthClassCount& c : counts)
    classes[c.name] = {{"sections_all", c.count_all},
                       {"area_fraction", t.contains("classes") && t["classes"].contains(c.name)
                                             ? t["classes"][c.name].value("area_fraction", 0.0)
                                             : c.area_fraction},
                       {"sections_resolved", c.count_resolved},
                       {"mean_ecd_all_um", c.mean_ecd_all_um},
                       {"mean_ecd_resolved_um", c.mean_ecd_resolved_um},
                       {"density_all_per_um2", c.density_all_per_um2},
                       {"density_resolved_per_um2", c.density_resolved_per_um2}};
  out["classes"] = classes;
  const double d3 = t.contains("scenario") ? t["scenario"].value("secondary_mean_diameter_3d_um", 0.0) : 0.0;
  out["secondary_mean_diameter_3d_um"] = d3;
  // N_V from the true sections by N_A = N_V ⟨D⟩ (Wicksell's identity).
  if (classes.contains("secondary") && d3 > 0)
    out["secondary_number_density_per_um3"] = classes["secondary"]["density_all_per_um2"].get<double>() / d3;
  return out;
}

/// The truth beside the measured values, as one table.
void write_truth_table(std::ostream& h, const nlohmann::json& truth, const MapResults& r) {
  if (truth.is_null()) return;
  auto cls = [&](const char* name, const char* key) {
    return truth["classes"].contains(name) ? truth["classes"][name].value(key, 0.0) : 0.0;
  };
  auto measured = [&](const char* name) -> const ClassStats* {
    for (const ClassStats& c : r.classes)
      if (c.name == name) return &c;
    return nullptr;
  };
  const ClassStats* sec = measured("secondary");
  const ClassStats* pri = measured("primary");
  const SphereSizeFit* fit = r.secondary_preferred();
  h << "<h2>Truth beside measurement (synthetic scan)</h2><table><tr><th>quantity</th><th>truth</th>"
       "<th>measured</th></tr>";
  auto row = [&](const std::string& q, const std::string& t, const std::string& m) {
    h << "<tr><td>" << q << "</td><td>" << t << "</td><td>" << m << "</td></tr>";
  };
  row("ordered area fraction", format_number("%.4f", truth["ordered_area_fraction"].get<double>()),
      format_number("%.4f", r.ordered_area_fraction()) + " (" + format_number("%.4f", r.e562.low) + " – " +
          format_number("%.4f", r.e562.high) + ")");
  row("sub-resolution ordered fraction", format_number("%.4f", truth["subresolution_ordered_fraction"].get<double>()),
      format_number("%.4f", r.fraction.subresolution_fraction) + " ± " +
          format_number("%.4f", r.fraction.subresolution_se) +
          (subresolution_measured(r) ? "" : " (not measured: learned estimator)"));
  if (pri)
    row("primary: area fraction; sections off the border",
        format_number("%.4f", cls("primary", "area_fraction")) + "; " +
            format_number("%.0f", cls("primary", "sections_all")),
        format_number("%.4f", pri->area_fraction) + "; " + std::to_string(pri->count));
  if (sec) {
    row("secondary sections at or above the limit: count (per µm²)",
        format_number("%.0f", cls("secondary", "sections_resolved")) + " (" +
            format_number("%.2f", cls("secondary", "density_resolved_per_um2")) + ")",
        std::to_string(sec->count) + " (" + format_number("%.2f", sec->number_density_per_um2) + ")");
    row("secondary mean section diameter of those sections (µm)",
        format_number("%.4f", cls("secondary", "mean_ecd_resolved_um")), format_number("%.4f", sec->mean_ecd_um));
    row("secondary sections, all: count; mean diameter (µm)",
        format_number("%.0f", cls("secondary", "sections_all")) + "; " +
            format_number("%.4f", cls("secondary", "mean_ecd_all_um")),
        fit ? "– ; " + format_number("%.4f", fit->mean_section_um) + " (" +
                  format_number("%.4f", fit->mean_section_low_um) + " – " +
                  format_number("%.4f", fit->mean_section_high_um) + ", 3-D fit)"
            : std::string("not determined"));
  }
  row("secondary 3-D mean diameter (µm)", format_number("%.4f", truth["secondary_mean_diameter_3d_um"].get<double>()),
      fit ? format_number("%.4f", fit->mean_diameter_um) + " (" + format_number("%.4f", fit->mean_low_um) + " – " +
                format_number("%.4f", fit->mean_high_um) + ", " + to_string(fit->model) + ")"
          : std::string("not determined"));
  if (truth.contains("secondary_number_density_per_um3"))
    row("secondary number density (µm⁻³; truth: all sections over the 3-D mean)",
        format_number("%.1f", truth["secondary_number_density_per_um3"].get<double>()),
        fit ? format_number("%.1f", fit->number_density_per_um3) + " (" +
                  format_number("%.1f", fit->density_low_per_um3) + " – " +
                  format_number("%.1f", fit->density_high_per_um3) + ")"
            : std::string("not determined"));
  h << "</table>\n";
}

/// Each point's phase as its measured ordered fraction shows it (f ≥ 0.5: ordered); a point
/// without a fraction carries the indexed parent (the disordered phase).
std::vector<std::string> measured_phases(const MapResults& r) {
  std::vector<std::string> phases;
  for (float f : r.fraction.fraction) phases.push_back(f >= 0.5f ? r.ordered_phase : r.disordered_phase);
  return phases;
}

/// The fraction stage's and the particles' per-point arrays with units and descriptions.
std::vector<PointArray> fraction_arrays(const MapResults& r) {
  const FractionResults& f = r.fraction;
  std::vector<PointArray> a;
  a.push_back({"ordered_fraction",
               "1",
               "ordered area fraction under the beam, clipped to [0, 1] (NaN: not measured)",
               f.fraction,
               {}});
  a.push_back({"ordered_fraction_unclipped", "1", "ordered fraction before clipping (unbiased means)", f.raw, {}});
  a.push_back({"fraction_uncertainty", "1", "standard error of the ordered fraction", f.uncertainty, {}});
  a.push_back({"pattern_quality", "1", "contrast of the fundamental bands", f.band_contrast, {}});
  a.push_back({"fraction_reason",
               "",
               "0 measured, 1 unusable pattern, 2 no orientation, 3 no band contrast, 4 grain too small to place",
               {},
               std::vector<int32_t>(f.reason.begin(), f.reason.end())});
  a.push_back({"particle_labels", "", "particle id of the point (0: matrix, -1: unusable)", {}, r.segmentation.label});
  return a;
}

std::string particle_table_csv(const MapResults& r, const std::string& provenance) {
  std::ostringstream os;
  os << "# " << provenance << "\n"
     << "id,class,points,area_um2,ecd_um,centroid_x_um,centroid_y_um,aspect_ratio,major_axis_deg,mean_fraction,"
        "host_grain,on_grain_boundary,touches_border,class_diameter_um,section_diameter_um\n";
  for (const Particle2D& p : r.segmentation.particles) {
    char b[400];
    std::snprintf(b, sizeof b, "%d,%s,%d,%.6f,%.6f,%.6f,%.6f,%.4f,%.2f,%.4f,%d,%d,%d,%.6f,%.6f\n", p.id,
                  p.size_class.c_str(), p.points, p.area_um2, p.ecd_um, p.centroid_x_um, p.centroid_y_um,
                  p.aspect_ratio, p.major_axis_deg, p.mean_fraction, p.host_grain, p.on_grain_boundary ? 1 : 0,
                  p.touches_border ? 1 : 0, p.class_diameter_um, p.section_diameter_um);
    os << b;
  }
  return os.str();
}

std::string class_table_csv(const MapResults& r, const std::string& provenance) {
  std::ostringstream os;
  os << "# " << provenance << "\n"
     << "class,lower_ecd_um,upper_ecd_um,count,area_fraction,number_density_per_um2,mean_ecd_um,median_ecd_um,"
        "lognormal_mu_ln_um,lognormal_sigma,counted\n";
  for (const ClassStats& c : r.classes) {
    char b[400];
    std::snprintf(b, sizeof b, "%s,%.4f,%s,%d,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%d\n", c.name.c_str(), c.lower_um,
                  std::isfinite(c.upper_um) ? format_number("%.4f", c.upper_um).c_str() : "", c.count, c.area_fraction,
                  c.number_density_per_um2, c.mean_ecd_um, c.median_ecd_um, c.lognormal_mu, c.lognormal_sigma,
                  c.counted ? 1 : 0);
    os << b;
  }
  return os.str();
}

/// One row per point: position, orientation (Bunge, °), ordered fraction and its standard error,
/// pattern quality, grain, particle and why a point was not measured. Empty cells: not known.
std::string point_table_csv(const ScanGrid& grid, const MapResults& r, const std::string& provenance) {
  static const char* const kReasons[] = {"measured", "unusable_pattern", "no_orientation", "no_band_contrast",
                                         "small_grain"};
  auto cell = [](float v, const char* format) { return std::isfinite(v) ? format_number(format, v) : std::string(); };
  std::ostringstream os;
  os << "# " << provenance << "\n"
     << "row,col,x_um,y_um,phi1_deg,Phi_deg,phi2_deg,ordered_fraction,fraction_se,pattern_quality,grain,particle,"
        "reason\n";
  for (size_t k = 0; k < grid.count(); ++k) {
    const GridPoint p = grid.point(k);
    const Eigen::Vector2d x = grid.position_um(p);
    os << p.row << ',' << p.col << ',' << format_number("%.6f", x.x()) << ',' << format_number("%.6f", x.y()) << ',';
    if (const auto& o = r.orientations.orientation[k]) {
      const Eigen::Vector3d e = o->bunge();
      os << format_number("%.6f", rad_to_deg(e[0])) << ',' << format_number("%.6f", rad_to_deg(e[1])) << ','
         << format_number("%.6f", rad_to_deg(e[2])) << ',';
    } else {
      os << ",,,";
    }
    const uint8_t reason = r.fraction.reason[k];
    os << cell(r.fraction.fraction[k], "%.6f") << ',' << cell(r.fraction.uncertainty[k], "%.6f") << ','
       << cell(r.fraction.band_contrast[k], "%.6f") << ',' << r.orientations.grains.id[k] << ','
       << r.segmentation.label[k] << ',' << (reason < 5 ? kReasons[reason] : "other") << '\n';
  }
  return os.str();
}

/// The charts the report shows inline (also written as SVG files).
struct ReportFigures {
  std::string profiles, diagnostics, histogram;
};

/// FNV-1a hashes of the input files, as the summary records them.
nlohmann::json input_hashes_json(const ScanConfig& config, const MapResults& r) {
  // The hashes read with the inputs; a file read without them is hashed here.
  auto hash = [&](const std::string& path) {
    const auto it = r.input_file_hashes.find(path);
    return it != r.input_file_hashes.end() ? it->second : file_hash_fnv1a64(path);
  };
  nlohmann::json hashes;
  hashes["scan_description"] = {{"file", config.path}, {"fnv1a64", hash(config.path)}};
  hashes["patterns"] = {
      {"file", config.patterns.path},
      {"fnv1a64", fs::is_directory(config.patterns.path) ? std::string("(folder)") : hash(config.patterns.path)}};
  if (config.orientations.source == OrientationSourceKind::file)
    hashes["orientations"] = {{"file", config.orientations.file}, {"fnv1a64", hash(config.orientations.file)}};
  for (const auto& [key, file] :
       {std::pair<const char*, const std::string&>{"ordered_mask", config.end_members.ordered_mask},
        {"disordered_mask", config.end_members.disordered_mask}})
    if (!file.empty()) hashes[key] = {{"file", file}, {"fnv1a64", hash(file)}};
  return hashes;
}

/// The summary's counts, the area fraction with its intervals, the sub-resolution fraction, the
/// pattern centre, the end members and the learned estimator's findings.
void add_fraction_summary(nlohmann::json& j, const ScanConfig& config, const MapResults& r, const MapOptions& options) {
  const size_t n = config.grid.count();
  j["points"] = n;
  j["points_measured"] = r.fraction.measured();
  j["points_unusable"] = std::count(r.fraction.reason.begin(), r.fraction.reason.end(), 1);
  j["points_without_orientation"] = std::count(r.fraction.reason.begin(), r.fraction.reason.end(), 2);
  j["points_without_band_contrast"] = std::count(r.fraction.reason.begin(), r.fraction.reason.end(), 3);
  j["points_in_grains_too_small_to_place"] = std::count(r.fraction.reason.begin(), r.fraction.reason.end(), 4);
  j["ordered_area_fraction"] = r.ordered_area_fraction();
  j["fraction_estimator"] = {{"used", r.fraction.estimator}, {"requested", r.fraction.estimator_requested}};
  j["ci95"] = {{"low", r.e562.low}, {"high", r.e562.high}, {"method", r.e562.method}};
  j["ci95_bootstrap"] = {{"low", r.bootstrap.low}, {"high", r.bootstrap.high}, {"method", r.bootstrap.method}};
  if (const MismatchSystematic sys = systematic_of(r, options); std::isfinite(sys.rms))
    j["systematic_uncertainty"] = {
        {"model_mismatch_rms", sys.rms},      {"largest_error", sys.largest},        {"variants", sys.variants},
        {"layouts_per_variant", sys.layouts}, {"scans_within_0_03", sys.within_003}, {"measured_by", sys.measured_by}};
  else
    j["systematic_uncertainty"] = nullptr;
  j["subresolution_ordered_fraction"] = r.fraction.subresolution_fraction;
  j["subresolution_ordered_fraction_se"] = r.fraction.subresolution_se;
  j["subresolution_points"] = r.fraction.subresolution_points;
  j["subresolution_measured"] = subresolution_measured(r);
  j["pattern_centre"] = {{"refined", r.fraction.pattern_centre_refined},
                         {"grains_used", r.fraction.pattern_centre_grains},
                         {"pc_px", {r.fraction.geometry.pc_px.x(), r.fraction.geometry.pc_px.y()}},
                         {"distance_px", r.fraction.geometry.distance_px},
                         {"given_pc_px", {config.geometry.pc_px.x(), config.geometry.pc_px.y()}},
                         {"given_distance_px", config.geometry.distance_px},
                         {"mean_correlation_before", r.fraction.pattern_centre_correlation_before},
                         {"mean_correlation_after", r.fraction.pattern_centre_correlation_after}};
  j["end_members"] = {
      {"disordered",
       {{"mean", r.fraction.disordered.mean},
        {"sd", r.fraction.disordered.sd},
        {"share", r.fraction.disordered.weight}}},
      {"ordered",
       {{"mean", r.fraction.ordered.mean}, {"sd", r.fraction.ordered.sd}, {"share", r.fraction.ordered.weight}}}};
  if (r.fraction.estimator == "learned")
    j["learned_estimator"] = {
        {"phases_found", r.fraction.two_phases ? 2 : 1},
        {"single_phase", r.fraction.two_phases ? "" : (r.fraction.single_phase_ordered ? "ordered" : "disordered")},
        {"component_separation_dprime", r.fraction.learned_separation},
        {"second_component_delta_bic", r.fraction.learned_evidence},
        {"spatial_structure_z", r.fraction.learned_spatial_z},
        {"end_members_from", r.fraction.learned_placed_by_patches ? "map patches" : "score distribution"},
        {"iterations", r.fraction.learned_iterations}};
}

/// The summary's grains, classes, 3-D sizes, truth, unfolding and families.
void add_particle_summary(nlohmann::json& j, const ScanConfig& config, const MapResults& r) {
  nlohmann::json grain_rows = nlohmann::json::array();
  for (size_t g = 0; g < r.fraction.grains.size(); ++g) {
    const GrainFraction& s = r.fraction.grains[g];
    nlohmann::json row = {{"id", g + 1},
                          {"points", s.points},
                          {"mean_fraction", s.mean},
                          {"matrix_points", s.matrix_points},
                          {"matrix_mean_fraction", s.matrix_mean},
                          {"matrix_sd", s.matrix_sd}};
    if (r.fraction.estimator == "learned")
      row["phases"] = name_of(s.kind), row["named_by"] = name_of(s.named_by), row["named_position"] = s.named_position;
    grain_rows.push_back(std::move(row));
  }
  j["grain_fractions"] = grain_rows;
  nlohmann::json classes = nlohmann::json::object();
  for (const ClassStats& c : r.classes)
    classes[c.name] = {{"area_fraction", c.area_fraction},
                       {"number_density_per_um2", c.number_density_per_um2},
                       {"mean_ecd_um", c.mean_ecd_um},
                       {"median_ecd_um", c.median_ecd_um},
                       {"count", c.count},
                       {"counted", c.counted},
                       {"lower_ecd_um", c.lower_um},
                       {"lognormal_mu_ln_um", c.lognormal_mu},
                       {"lognormal_sigma", c.lognormal_sigma}};
  j["classes"] = classes;
  add_size_statistics(j, r, config);
  const nlohmann::json truth = truth_beside(config, r);
  if (!truth.is_null()) j["truth"] = truth;
  j["particles"] = r.segmentation.particles.size();
  j["threshold"] = r.segmentation.threshold;
  if (!r.unfolding.sphere_count.empty())
    j["secondary_unfolding"] = {
        {"method", "Schwartz-Saltykov, spheres assumed"},         {"class_width_um", r.unfolding.class_width_um},
        {"sphere_diameter_um", r.unfolding.diameter_um},          {"section_count_per_um2", r.unfolding.section_count},
        {"sphere_count_per_um3", r.unfolding.sphere_count},       {"negative_classes", r.unfolding.negative_classes},
        {"mean_sphere_diameter_um", r.unfolding.mean_diameter_um}};
  nlohmann::json fams = nlohmann::json::array();
  for (const auto& f : r.fraction.families) {
    nlohmann::json row = {{"family", f.label},
                          {"superlattice", f.superlattice},
                          {"sensitivity", f.sensitivity},
                          {"weight", f.weight},
                          {"separation_dprime", f.separation}};
    if (!f.learned_difference.empty()) {
      // The learned response beside the model's: ordered − disordered profile difference per bin.
      row["learned_profile_u"] = f.learned_u;
      row["learned_difference"] = f.learned_difference;
    }
    fams.push_back(row);
  }
  j["families"] = fams;
  j["grains"] = r.orientations.grains.count();
  j["grain_checks"] = {{"pseudo_symmetric_grains", r.orientations.pseudo_symmetric_grains},
                       {"pseudo_symmetric_points", r.orientations.pseudo_symmetric_points},
                       {"points_joined_to_grain", r.orientations.points_joined_to_grain},
                       {"points_from_neighbours", r.orientations.points_from_neighbours}};
}

/// Every parameter of the run, as the summary records them. Longer than the ~80 lines a function
/// should have only because it is one declarative table, one parameter per line.
nlohmann::json parameters_json(const ScanConfig& config, const std::string& ordered_phase,
                               const std::string& disordered_phase, const MapOptions& options) {
  const ScanGrid& grid = config.grid;
  return {{"kv", config.kv},
          {"phases", {{"ordered", ordered_phase}, {"disordered", disordered_phase}}},
          {"preprocess",
           {{"static_background", name_of(config.preprocess.static_background)},
            {"static_background_sigma_px", config.preprocess.static_background_sigma_px},
            {"scan_mean_points", config.preprocess.scan_mean_points},
            {"dynamic_background_sigma_px", config.preprocess.dynamic_background_sigma_px},
            {"neighbour_sigma_steps", config.preprocess.neighbour_sigma_steps},
            {"hot_pixel_filter", config.preprocess.hot_pixel_filter}}},
          {"orientation",
           {{"source", name_of(config.orientations.source)},
            {"refine", config.orientations.refine},
            {"grain_threshold_deg", options.orient.grains.threshold_deg},
            {"orientations_from_row_above", options.orient.from_neighbours},
            {"row_above_correlation_margin", options.orient.neighbour_margin},
            {"grain_min_points", options.orient.grains.min_points},
            {"grain_split_bimodal", options.orient.grains.split_bimodal},
            {"candidates", options.orient.candidates},
            {"pseudo_symmetry_samples", options.orient.pseudo_symmetry_samples},
            {"pseudo_symmetry_candidates", options.orient.pseudo_symmetry_candidates},
            {"pseudo_symmetry_gain", options.orient.pseudo_symmetry_gain}}},
          {"fraction",
           {{"estimator", name_of(options.fraction.estimator)},
            {"sensitivity_threshold", options.fraction.sensitivity_threshold},
            {"d_min_A", options.fraction.d_min_A},
            {"fundamental_families", options.fraction.fundamental_families},
            {"min_points_for_grain_fit", options.fraction.min_points_for_grain_fit},
            {"learned_profile_u_max", options.fraction.learned_profile.u_max},
            {"learned_profile_bin_u", options.fraction.learned_profile.bin_u},
            {"learned_profile_folded", options.fraction.learned_profile.folded},
            {"learned_iterations", options.fraction.learned.iterations},
            {"learned_shrinkage", options.fraction.learned.shrinkage},
            {"learned_min_evidence", options.fraction.learned.min_evidence},
            {"learned_min_second_weight", options.fraction.learned.min_second_weight},
            {"learned_min_class_points", options.fraction.learned.min_class_points},
            {"learned_min_grain_points", options.fraction.learned.min_grain_points},
            {"learned_spatial_start", options.fraction.learned.spatial_start},
            {"profile_u_max", options.fraction.profile.u_max},
            {"profile_bin_u", options.fraction.profile.bin_u},
            {"window_interior_max", options.fraction.windows.interior_max},
            {"window_flank_min", options.fraction.windows.flank_min},
            {"window_flank_max", options.fraction.windows.flank_max},
            {"orientation_uncertainty_deg", rad_to_deg(options.fraction.orientation_uncertainty_rad)},
            {"orientation_kernel_radius", options.fraction.orientation_kernel_radius},
            {"refine_pattern_centre", options.fraction.refine_pattern_centre},
            {"grain_reference_max_deg", rad_to_deg(options.fraction.grain_reference_max_rad)},
            {"ordered_mask_points",
             std::count(options.fraction.ordered_mask.begin(), options.fraction.ordered_mask.end(), 1)},
            {"disordered_mask_points",
             std::count(options.fraction.disordered_mask.begin(), options.fraction.disordered_mask.end(), 1)},
            {"ordered_regions",
             [&] {
               nlohmann::json a = nlohmann::json::array();
               for (const PointRect& q : options.fraction.ordered_regions)
                 a.push_back({q.row0, q.col0, q.row1, q.col1});
               return a;
             }()},
            {"disordered_regions",
             [&] {
               nlohmann::json a = nlohmann::json::array();
               for (const PointRect& q : options.fraction.disordered_regions)
                 a.push_back({q.row0, q.col0, q.row1, q.col1});
               return a;
             }()},
            {"end_members", name_of(options.fraction.end_members)}}},
          {"particles",
           {{"threshold_method", name_of(options.segment.method)},
            {"threshold", options.segment.threshold},
            {"connectivity", grid.kind == GridKind::hexagonal ? 6 : options.segment.square_connectivity},
            {"min_points", options.segment.min_points},
            {"smooth", options.segment.smooth},
            {"exclude_border", options.segment.exclude_border},
            {"class_names", options.classes.names},
            {"class_lower_um", options.classes.lower_um},
            {"e562_tiles", options.e562_tiles},
            {"bootstrap_block", options.bootstrap_block},
            {"bootstrap_resamples", options.bootstrap_resamples},
            {"split_touching", options.segment.split_touching},
            {"split_sigma_steps", options.segment.split_sigma_steps},
            {"split_depth_sd", options.segment.split_depth_sd},
            {"split_shape_depth_steps", options.segment.split_shape_depth_steps},
            {"split_elongated_aspect", options.segment.split_elongated_aspect},
            {"detection_probability", options.detection.detection_probability},
            {"detection_transfer_discs", options.detection.transfer_discs},
            {"detection_max_false_particles", options.detection.max_false_particles},
            {"detection_noise_maps", options.detection.noise_maps},
            {"detection_seed", options.detection.seed},
            {"unfold_classes", options.unfold_classes}}},
          {"mean_spheres", options.mean_spheres},
          {"mean_sphere_points", options.mean_sphere_points}};
}

}  // namespace

std::string map_parameters_text(const ScanInputs& inputs, const MapOptions& options) {
  return parameters_json(inputs.config, inputs.phases.ordered.name, inputs.phases.disordered.name, options).dump();
}

namespace {

/// The files a run writes.
nlohmann::json files_json(const std::vector<PointArray>& arrays) {
  nlohmann::json files = {"fraction_map.png",
                          "ordered_mask.png",
                          "orientation_map.png",
                          "grain_map.png",
                          "ordered_fraction.npy",
                          "ordered_fraction_unclipped.npy",
                          "fraction_uncertainty.npy",
                          "pattern_quality.npy",
                          "fraction_reason.npy",
                          "particle_labels.npy",
                          "grain_ids.npy",
                          "orientations.csv",
                          "particles.csv",
                          "classes.csv",
                          "band_profiles.svg",
                          "family_diagnostics.svg",
                          "size_histogram.svg",
                          "mean_sphere_disordered.png",
                          "mean_sphere_ordered.png",
                          "mean_sphere_difference.png",
                          "report.html",
                          "points.csv",
                          "results.h5"};
  for (const PointArray& a : arrays)
    if (a.is_float()) files.push_back(a.name + ".tif");
  return files;
}

/// What every summary.json starts with: the tool, warnings, faulty patterns, the run's inputs.
nlohmann::json summary_head(const ScanConfig& config, const MapResults& r, const std::string& command_line) {
  nlohmann::json j;
  j["tool"] = "orderband";
  j["version"] = kVersion;
  j["warnings"] = map_warnings(r);
  // Faulty patterns (at most the first 100 listed; the count is whole).
  j["faulty_patterns"] = r.orientations.pattern_faults.size();
  nlohmann::json faulty = nlohmann::json::array();
  for (const auto& [index, reason] : r.orientations.pattern_faults) {
    if (faulty.size() >= 100) break;
    faulty.push_back({{"index", index}, {"reason", reason}});
  }
  j["faulty_pattern_list"] = faulty;
  j["command_line"] = command_line;
  j["scan"] = config.path;
  j["input_hashes"] = input_hashes_json(config, r);
  j["pattern_sample"] = {{"patterns", r.pattern_sample.patterns},
                         {"hot_pixels_per_pattern", r.pattern_sample.hot_pixels_per_pattern},
                         {"hot_pixel_threshold_mad", r.pattern_sample.hot_pixel_threshold},
                         {"stored_width_px", r.pattern_sample.likely_width_px}};
  return j;
}

/// The summary (summary.json).
nlohmann::json map_summary(const ScanConfig& config, const MapResults& r, const MapOptions& options,
                           const std::string& command_line, const std::vector<PointArray>& arrays) {
  nlohmann::json j = summary_head(config, r, command_line);
  add_fraction_summary(j, config, r, options);
  add_particle_summary(j, config, r);
  j["parameters"] = parameters_json(config, r.ordered_phase, r.disordered_phase, options);
  j["files"] = files_json(arrays);
  return j;
}

/// The report page's head: style, title, the scan in one line, the warnings.
void write_report_head(std::ostream& h, const ScanConfig& config, const MapResults& r) {
  const ScanGrid& grid = config.grid;
  h << html_page_head("orderband report: " + fs::path(config.path).parent_path().filename().string());
  h << "<h1>Ordered-phase analysis</h1>\n<p>Scan <code>" << xml_escape(config.path) << "</code>: " << grid.rows << " x "
    << grid.cols << " points, step " << format_number("%g", grid.step_um) << " µm; pair " << xml_escape(r.ordered_phase)
    << " / " << xml_escape(r.disordered_phase) << " at " << format_number("%g", config.kv) << " kV.</p>\n";
  for (const std::string& w : map_warnings(r))
    h << "<p style=\"border:1px solid #c60;background:#fff4e5;padding:6px\"><b>Warning:</b> " << xml_escape(w)
      << "</p>\n";
}

/// Which estimator ran, and why where the choice was left to the scan's size.
std::string estimator_row(const MapResults& r) {
  const FractionResults& f = r.fraction;
  std::string text = f.estimator == "learned"   ? "learned (the response to ordering learned from this scan)"
                     : f.estimator == "profile" ? "model-led (the kinematic model's references of both phases)"
                                                : f.estimator;
  const std::string limit = std::to_string(kLearnedEstimatorMinPoints);
  if (f.estimator_choice == EstimatorChoice::enough_points)
    text += "; chosen for a scan of at least " + limit + " points";
  else if (f.estimator_choice == EstimatorChoice::too_few_points)
    text += "; chosen because the scan has fewer than " + limit + " points";
  else if (f.estimator_choice == EstimatorChoice::mixture_end_members)
    text += "; chosen because mixture end members rescale its estimates";
  return "<tr><td>fraction estimator</td><td>" + xml_escape(text) + "</td></tr>";
}

/// The learned estimator's verdict as a row of the report's table (empty for the other estimators):
/// how many phases, on what evidence, and where the end members came from.
std::string learned_verdict_row(const MapResults& r) {
  if (r.fraction.estimator != "learned") return "";
  const FractionResults& f = r.fraction;
  std::string verdict = f.two_phases ? std::string("two phases")
                                     : std::string("one phase, ") + (f.single_phase_ordered ? "ordered" : "disordered");
  verdict += " (second component ΔBIC " + format_number("%.1f", f.learned_evidence) + ", map structure z " +
             format_number("%.1f", f.learned_spatial_z) + ")";
  if (f.two_phases)
    verdict += f.learned_placed_by_patches ? "; end members from the map's patches: point by point the phases overlap"
                                           : "; end members from the distribution of the scores";
  return "<tr><td>learned estimator</td><td>" + xml_escape(verdict) + "</td></tr>";
}

/// Where the end members came from, where not from the estimator itself (empty then): reference
/// regions with their point counts, or a mixture fit.
std::string end_members_row(const ScanGrid& grid, const MapResults& r, const FractionSpec& spec) {
  std::string text;
  if (spec.end_members == EndMemberMode::mixture) {
    text = "0 and 1 at the two modes of a mixture fitted to the estimates";
  } else if (spec.end_members == EndMemberMode::regions) {
    size_t count[2] = {0, 0};
    for (size_t k = 0; k < grid.count(); ++k)
      for (int phase = 0; phase < 2; ++phase) count[phase] += spec.in_reference(k, grid.point(k), phase == 1);
    text = "0 at the disordered reference region (" + std::to_string(count[0]) + " points; not part of the matrix)";
    text += count[1] > 0 ? "; 1 at the ordered reference region (" + std::to_string(count[1]) + " points)"
            : r.fraction.estimator == "learned" ? "; 1 at the scan's own particles (the learned placement)"
                                                : "";
  }
  return text.empty() ? "" : "<tr><td>end members</td><td>" + xml_escape(text) + "</td></tr>";
}

/// The report's numbers: the area fraction with its intervals, the classes, the truth beside them.
void write_report_results(std::ostream& h, const ScanConfig& config, const MapResults& r, const MapOptions& options,
                          const nlohmann::json& truth) {
  const size_t n = config.grid.count();
  h << "<table><tr><th>quantity</th><th>value</th></tr>"
    << "<tr><td>ordered area fraction</td><td>" << format_number("%.4f", r.ordered_area_fraction()) << "</td></tr>"
    << "<tr><td>95 % CI (" << xml_escape(r.e562.method) << ")</td><td>" << format_number("%.4f", r.e562.low) << " – "
    << format_number("%.4f", r.e562.high) << "</td></tr>"
    << "<tr><td>95 % CI (" << xml_escape(r.bootstrap.method) << ")</td><td>" << format_number("%.4f", r.bootstrap.low)
    << " – " << format_number("%.4f", r.bootstrap.high) << "</td></tr>" << systematic_row(r, options)
    << "<tr><td>sub-resolution ordered fraction (matrix away from particles and grain boundaries)</td><td>"
    << format_number("%.4f", r.fraction.subresolution_fraction) << " ± "
    << format_number("%.4f", r.fraction.subresolution_se)
    << (subresolution_measured(r) ? "" : " (not measured: the learned estimator takes the matrix as its zero)")
    << "</td></tr>" << estimator_row(r) << learned_verdict_row(r) << end_members_row(config.grid, r, options.fraction)
    << "<tr><td>points measured / total</td><td>" << r.fraction.measured() << " / " << n << "</td></tr>"
    << "<tr><td>grains</td><td>" << r.orientations.grains.count() << "</td></tr></table>\n";
  write_class_tables(h, r, config, options.classes);
  write_truth_table(h, truth, r);
}

/// The learned estimator's verdict on a grain, for the report's grain table: both phases, or one
/// phase with what named it and its position between the two-phase grains' matrix and particles.
std::string grain_phases_cell(const GrainFraction& s) {
  switch (s.kind) {
    case GrainKind::two_components:
      return "both";
    case GrainKind::not_placed:
      return "not placed";
    default:
      break;
  }
  std::string cell = s.kind == GrainKind::ordered_alone ? "ordered alone" : "disordered alone";
  switch (s.named_by) {
    case GrainNamedBy::common_view:
      return cell + " (at " + format_number("%.2f", s.named_position) + ", common directions)";
    case GrainNamedBy::model_transfer:
      return cell + " (at " + format_number("%.2f", s.named_position) + ", by the model between orientations)";
    case GrainNamedBy::model_level:
      return cell + " (by the model's level)";
    case GrainNamedBy::reference_region:
      return cell + " (reference region)";
    default:
      return cell;
  }
}

/// The report's table of the largest grains (the orientation-bias check).
void write_report_grains(std::ostream& h, const MapResults& r) {
  {
    // The largest grains: their matrix away from particles and grain boundaries should agree
    // (orientation bias check).
    std::vector<size_t> order;
    for (size_t g = 0; g < r.fraction.grains.size(); ++g)
      if (r.fraction.grains[g].matrix_points >= 10 || r.fraction.grains[g].named_by != GrainNamedBy::none)
        order.push_back(g);
    std::stable_sort(order.begin(), order.end(),
                     [&](size_t a, size_t b) { return r.fraction.grains[a].points > r.fraction.grains[b].points; });
    if (order.size() > 12) order.resize(12);
    if (!order.empty()) {
      const bool learned = r.fraction.estimator == "learned";
      h << "<h2>Grains</h2><table><tr><th>grain</th><th>points</th><th>mean f</th><th>matrix points</th>"
           "<th>matrix mean f</th><th>matrix sd</th>"
        << (learned ? "<th>phases</th>" : "") << "</tr>";
      for (size_t g : order) {
        const GrainFraction& s = r.fraction.grains[g];
        h << "<tr><td>" << g + 1 << "</td><td>" << s.points << "</td><td>" << format_number("%.4f", s.mean)
          << "</td><td>" << s.matrix_points << "</td><td>"
          << (s.matrix_points ? format_number("%.4f", s.matrix_mean) : "–") << "</td><td>"
          << (s.matrix_points ? format_number("%.4f", s.matrix_sd) : "–") << "</td>";
        if (learned) h << "<td>" << grain_phases_cell(s) << "</td>";
        h << "</tr>";
      }
      h << "</table><p>The matrix of every grain, away from particles and grain boundaries, holds the same phases, "
           "so its mean f should "
           "agree between grains whatever their orientation; a grain far from the others points to a mismatch of the "
           "model at that orientation (every grain is in <code>summary.json</code> under "
           "<code>grain_fractions</code>)."
        << (learned ? " A grain of one phase (a primary particle with its own orientation, a grain without "
                      "particles) is named by its position between the matrix (0) and the particles (1) of the "
                      "grains that hold both, compared over the crystal directions both grains show."
                    : "")
        << "</p>\n";
    }
  }
}

/// The report's maps and the figures that show why the tool concluded what it did.
void write_report_figures(std::ostream& h, const MapResults& r, const ReportFigures& figures,
                          const std::function<std::string(const std::string&, const std::string&)>& img) {
  const std::string &profiles = figures.profiles, &diagnostics = figures.diagnostics, &histogram = figures.histogram;
  h << "<h2>Maps</h2>\n<figure>" << img("fraction_map.png", "ordered fraction map")
    << "<figcaption>Ordered fraction f per point (0: disordered, 1: ordered), with colour bar and scale bar; grey: no "
       "measurement.</figcaption></figure>\n";
  h << "<figure>" << img("ordered_mask.png", "ordered mask") << "<figcaption>Particles (f ≥ "
    << format_number("%.2f", r.segmentation.threshold)
    << ", amber, outlined red) over the pattern quality (grey: fundamental band contrast); blue: unusable points."
       "</figcaption></figure>\n";
  h << "<figure>" << img("orientation_map.png", "orientation map")
    << "<figcaption>Orientations: inverse-pole-figure colours of the sample normal, key beside the "
       "map.</figcaption></figure>\n";
  h << "<h2>Why the tool concluded this</h2>\n<figure>" << profiles
    << "<figcaption>Band profiles of the strongest-weighted superlattice families from the kinematic model of both end "
       "members at the largest grain's orientation, processed like the data; shaded: interior and flank "
       "windows.</figcaption></figure>\n";
  h << "<figure>" << diagnostics << "<figcaption>"
    << (r.fraction.estimator == "learned"
            ? "How much of the ordering response each family carries, learned from the scan beside the kinematic "
              "model's: the root mean square of each family's ordered − disordered profile difference, as a share of "
              "the sum over the families."
            : "Each superlattice family's weight in the estimator and the separation of the end members it gives "
              "alone (d′ per point).")
    << "</figcaption></figure>\n";
  if (const auto learned = learned_response_charts(r); !learned.empty())
    h << "<figure>" << as_div(learned)
      << "<figcaption>The ordering response the learned estimator found in the scan beside the kinematic model's: "
         "the ordered − disordered profile difference per family, each scaled to a largest magnitude of 1. Where the "
         "two differ in shape, the data's bands are not the model's (band shapes, edge lines, intensities); the "
         "learned estimator uses its own.</figcaption></figure>\n";
  h << "<figure>" << histogram
    << "<figcaption>Particle sizes with the class boundaries and log-normal fits per class.</figcaption></figure>\n";
  if (r.mean_disordered) {
    h << "<figure><div class=\"plots\">" << img("mean_sphere_disordered.png", "mean sphere of the disordered points")
      << img("mean_sphere_ordered.png", "mean sphere of the ordered points")
      << img("mean_sphere_difference.png", "difference")
      << "</div><figcaption>Mean spheres of the measured patterns (stereographic, upper hemisphere of the crystal "
         "frame) of the points "
         "measured "
         "as disordered (f &lt; 0.2) and ordered (f &gt; 0.8), and their difference (red: brighter in the ordered "
         "phase).</figcaption></figure>\n";
  }
}

/// The report's end: the geometry of the references, provenance, cautions.
void write_report_footer(std::ostream& h, const ScanConfig& config, const MapResults& r,
                         const std::string& provenance) {
  {
    const FractionResults& f = r.fraction;
    h << "<p>Detector geometry of the references: pattern centre (" << format_number("%.2f", f.geometry.pc_px.x())
      << ", " << format_number("%.2f", f.geometry.pc_px.y()) << ") px, distance "
      << format_number("%.2f", f.geometry.distance_px) << " px ";
    if (f.pattern_centre_refined)
      h << "(refined from the given (" << format_number("%.2f", config.geometry.pc_px.x()) << ", "
        << format_number("%.2f", config.geometry.pc_px.y()) << ") px, "
        << format_number("%.2f", config.geometry.distance_px) << " px on the mean patterns of "
        << f.pattern_centre_grains << " grains; model–pattern correlation "
        << format_number("%.4f", f.pattern_centre_correlation_before) << " → "
        << format_number("%.4f", f.pattern_centre_correlation_after) << ").</p>\n";
    else
      h << (f.pattern_centre_grains > 0 ? "(as given: refining did not improve the match).</p>\n"
                                        : "(as given).</p>\n");
  }
  h << "<h2>Provenance</h2><p><code>" << xml_escape(provenance)
    << "</code></p><p>Every parameter and the input hashes "
       "are in <code>summary.json</code>.</p>\n";
  h << "<p class=\"caution\">Results are for research and screening. Qualification of safety-critical parts follows "
       "the "
       "applicable material specifications, accredited testing and licensed practice. The band model is kinematic, not "
       "dynamical.</p>\n";
  h << "<script>window.addEventListener('load',function(){var im=document.images,ok=0;for(var i=0;i<im.length;i++)"
       "{if(im[i].complete&&im[i].naturalWidth>0)ok++;}document.body.setAttribute('data-images-loaded',ok+'/"
       "'+im.length);"
       "});</script>\n</body></html>\n";
}

/// The map pictures: fraction map, ordered mask, and the mean spheres with their difference.
void write_map_images(const std::string& folder, const ScanGrid& grid, const MapResults& r,
                      const std::vector<std::pair<std::string, std::string>>& text) {
  write_png_rgb(folder + "/fraction_map.png", fraction_map_image(grid, r.fraction.fraction), text);
  write_png_rgb(folder + "/ordered_mask.png", mask_image(grid, r), text);
  if (r.mean_disordered && r.mean_ordered) {
    write_png_rgb(folder + "/mean_sphere_disordered.png", stereographic_image(*r.mean_disordered, 360), text);
    write_png_rgb(folder + "/mean_sphere_ordered.png", stereographic_image(*r.mean_ordered, 360), text);
    SphereMap diff(r.mean_ordered->grid);
    for (long p = 0; p < diff.grid.npix(); ++p) {
      if (r.mean_ordered->weight[p] <= 0 || r.mean_disordered->weight[p] <= 0) continue;
      diff.sum[p] = r.mean_ordered->value(p) - r.mean_disordered->value(p);
      diff.weight[p] = 1;
    }
    write_png_rgb(folder + "/mean_sphere_difference.png", stereographic_image_signed(diff, 360), text);
  }
}

/// The report: one self-contained page (images inlined) that reads from the results to the reasons.
void write_report_page(const std::string& folder, const ScanConfig& config, const MapResults& r,
                       const MapOptions& options, const ReportFigures& figures, const std::string& provenance) {
  auto img = [&](const std::string& file, const std::string& alt) {
    return "<img alt=\"" + xml_escape(alt) + "\" src=\"data:image/png;base64," +
           base64(read_text_file(folder + "/" + file, "image")) + "\">";
  };
  std::ostringstream h;
  write_report_head(h, config, r);
  write_report_results(h, config, r, options, truth_beside(config, r));
  write_report_grains(h, r);
  write_report_figures(h, r, figures, img);
  write_report_footer(h, config, r, provenance);
  write_text_atomically(folder + "/report.html", h.str());
}

}  // namespace

void write_unmeasured_summary(const std::string& folder, const ScanConfig& config, const MapResults& r,
                              const MapOptions& options, const std::string& command_line) {
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) fail("cannot create output folder '", folder, "': ", ec.message());
  nlohmann::json j = summary_head(config, r, command_line);
  j["result"] = no_usable_point_sentence(r);
  nlohmann::json reasons;
  for (FractionReason why : {FractionReason::unusable_pattern, FractionReason::no_orientation,
                             FractionReason::no_band_contrast, FractionReason::small_grain})
    reasons[std::string(name_of(why))] =
        std::count(r.fraction.reason.begin(), r.fraction.reason.end(), static_cast<uint8_t>(why));
  j["points"] = {{"total", r.fraction.reason.size()}, {"measured", 0}, {"not_measured_by_reason", reasons}};
  j["parameters"] = parameters_json(config, r.ordered_phase, r.disordered_phase, options);
  write_text_atomically(folder + "/summary.json", j.dump(2) + "\n");
}

void write_map_outputs(const std::string& folder, const ScanConfig& config, const MapResults& r,
                       const MapOptions& options, const std::string& command_line) {
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) fail("cannot create output folder '", folder, "': ", ec.message());
  const ScanGrid& grid = config.grid;
  const std::string provenance = std::string("orderband ") + kVersion + ": " + command_line;
  const std::vector<std::pair<std::string, std::string>> text{{"Software", provenance}};

  // Orientation-stage files (orientations.csv, grain map, IPF map, npy maps).
  write_orientation_outputs(folder, config, r.orientations, options.orient, measured_phases(r), command_line);

  const std::vector<PointArray> fraction_maps = fraction_arrays(r);
  write_point_arrays_npy(folder, grid.rows, grid.cols, fraction_maps);
  std::vector<PointArray> all_arrays = orientation_arrays(r.orientations);
  all_arrays.insert(all_arrays.end(), fraction_maps.begin(), fraction_maps.end());
  write_map_images(folder, grid, r, text);

  // Tables.
  const std::vector<CsvTable> tables{{"particles", particle_table_csv(r, provenance)},
                                     {"classes", class_table_csv(r, provenance)},
                                     {"points", point_table_csv(grid, r, provenance)}};
  for (const CsvTable& t : tables) write_text_atomically(folder + "/" + t.name + ".csv", t.csv);

  // Summary.
  const nlohmann::json j = map_summary(config, r, options, command_line, all_arrays);
  write_text_atomically(folder + "/summary.json", j.dump(2) + "\n");

  // The same for other tools: float TIFFs and one HDF5 file with every array, table and the summary.
  write_point_arrays_tiff(folder, grid.rows, grid.cols, all_arrays);
  write_results_h5(folder + "/results.h5", grid.rows, grid.cols, all_arrays, tables, j.dump(2), provenance);

  // Plots.
  const std::vector<std::string> profile_charts = band_profile_charts(r, options.fraction);
  const std::vector<std::string> diagnostic_charts = diagnostics_charts(r);
  const ReportFigures figures{as_div(profile_charts), as_div(diagnostic_charts), histogram_svg(r, options.classes)};
  write_text_atomically(folder + "/band_profiles.svg", svg_grid(profile_charts, 2, 430, 270));
  write_text_atomically(folder + "/family_diagnostics.svg", svg_grid(diagnostic_charts, 1, 900, 270));
  write_text_atomically(folder + "/size_histogram.svg", figures.histogram);

  write_report_page(folder, config, r, options, figures, provenance);
}

}  // namespace orderband
