// A trial's summary read from a map's summary.json.
#include "orderband/trial_summary_file.hpp"

#include <limits>
#include <nlohmann/json.hpp>

#include "orderband/error.hpp"

namespace orderband {
namespace {

ClassSummary class_summary(const nlohmann::json& classes, const char* name) {
  ClassSummary c;
  if (!classes.contains(name)) return c;
  const nlohmann::json& j = classes.at(name);
  c.area_fraction = j.at("area_fraction");
  c.count = j.at("count");
  c.mean_ecd_um = j.at("mean_ecd_um");
  c.number_density_per_um2 = j.value("number_density_per_um2", 0.0);
  return c;
}

SecondarySizeFit secondary_fit(const nlohmann::json& s) {
  SecondarySizeFit f;
  if (!s.contains("secondary_3d") || !s["secondary_3d"].is_object()) return f;
  const nlohmann::json& fits = s["secondary_3d"];
  f.model = fits.value("preferred", "");
  if (f.model.empty() || !fits.contains(f.model) || !fits[f.model].is_object()) return f;
  const nlohmann::json& fit = fits[f.model];
  f.determined = fit.value("determined", false);
  if (!f.determined) return f;
  f.mean_section_diameter_um = {fit.at("mean_section_diameter_um"), fit.at("mean_section_diameter_ci95_um").at(0),
                                fit.at("mean_section_diameter_ci95_um").at(1)};
  const auto& ci = fit.value("mean_diameter_ci95_um", nlohmann::json::array());
  auto bound = [&](size_t i) {
    return ci.size() == 2 && ci[i].is_number() ? ci[i].get<double>() : std::numeric_limits<double>::quiet_NaN();
  };
  f.mean_diameter_um = {fit.at("mean_diameter_um"), bound(0), bound(1)};
  return f;
}

std::optional<TrialTruth> trial_truth(const nlohmann::json& s) {
  if (!s.contains("truth")) return std::nullopt;
  const nlohmann::json& t = s["truth"];
  auto cls = [&](const char* name, const char* key) {
    return t.contains("classes") && t["classes"].contains(name) ? t["classes"][name].value(key, 0.0) : 0.0;
  };
  TrialTruth truth;
  truth.ordered_fraction = t.at("ordered_area_fraction");
  truth.secondary_mean_ecd_all_um = cls("secondary", "mean_ecd_all_um");
  truth.primary_fraction = cls("primary", "area_fraction");
  return truth;
}

}  // namespace

TrialSummary parse_trial_summary(const std::string& text, const std::string& what) {
  try {
    const nlohmann::json s = nlohmann::json::parse(text);
    TrialSummary t;
    t.ordered_fraction = {s.at("ordered_area_fraction"), s.at("ci95").at("low"), s.at("ci95").at("high")};
    // Not measured (the learned estimator's zero is the matrix): NaN, not the ≈ 0 it reads.
    t.subresolution_ordered_fraction = s.value("subresolution_measured", true)
                                           ? s.value("subresolution_ordered_fraction", 0.0)
                                           : std::numeric_limits<double>::quiet_NaN();
    t.primary = class_summary(s.at("classes"), "primary");
    t.secondary = class_summary(s.at("classes"), "secondary");
    t.secondary_3d = secondary_fit(s);
    t.truth = trial_truth(s);
    return t;
  } catch (const nlohmann::json::exception& e) {
    fail(what, ": not a map summary this version reads (", e.what(), ")");
  }
}

}  // namespace orderband
