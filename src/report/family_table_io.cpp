// Plane-family tables as aligned text, CSV and JSON.
#include "orderband/family_table_io.hpp"

#include <cmath>
#include <cstdio>
#include <nlohmann/json.hpp>

#include "orderband/electron.hpp"
#include "orderband/html_page.hpp"
#include "orderband/units.hpp"

namespace orderband {
namespace {

void provenance_lines(std::ostream& os, const TableProvenance& p) {
  os << "# orderband " << p.version << ": " << p.command_line << "\n";
  os << "# accelerating voltage " << format_number("%g", p.kilovolts) << " kV, electron wavelength "
     << format_number("%.4f", electron_wavelength_A(p.kilovolts) * 100.0)
     << " pm, d >= " << format_number("%g", p.d_min_A) << " A\n";
}

std::string phase_line(const char* role, const Phase& ph) {
  return std::string("# ") + role + ph.name + " (" + ph.space_group_hm + ", Laue class " + ph.laue_class +
         ", a = " + format_number("%.4f", ph.cell.a_A) + " A) from " + ph.source + "\n";
}

nlohmann::json provenance_json(const TableProvenance& p) {
  return {{"tool", "orderband"},
          {"version", p.version},
          {"command_line", p.command_line},
          {"parameters",
           {{"accelerating_voltage_kv", p.kilovolts},
            {"d_min_A", p.d_min_A},
            {"sensitivity_threshold", p.sensitivity_threshold},
            {"electron_wavelength_pm", electron_wavelength_A(p.kilovolts) * 100.0}}}};
}

nlohmann::json phase_json(const Phase& ph) {
  return {{"name", ph.name},
          {"source", ph.source},
          {"space_group", ph.space_group_hm},
          {"laue_class", ph.laue_class},
          {"a_A", ph.cell.a_A},
          {"b_A", ph.cell.b_A},
          {"c_A", ph.cell.c_A},
          {"alpha_deg", ph.cell.alpha_deg},
          {"beta_deg", ph.cell.beta_deg},
          {"gamma_deg", ph.cell.gamma_deg}};
}

std::string role_of(const PairFamily& r, double threshold) {
  return r.sensitivity >= threshold ? "superlattice" : "fundamental";
}

std::string dynamical_parameters(const DynamicalColumns& d) {
  return "nside " + std::to_string(d.spec.nside) + ", " + format_number("%g", d.spec.kilovolts) +
         " kV, beams |g| <= " + format_number("%g", d.spec.beams.max_g_inv_A) + " 1/A, strong limit " +
         format_number("%g", d.spec.beams.strong_limit) + ", weak limit " +
         format_number("%g", d.spec.beams.weak_limit) + ", absorption " +
         format_number("%g", d.spec.absorption.proportional) + " x U_g, mean depth " +
         format_number("%g", d.spec.depth.mean_depth_A / 10) + " nm";
}

void write_dynamical_text(std::ostream& os, const std::vector<PairFamily>& rows, const DynamicalColumns& d) {
  os << "\n# band profiles on many-beam spheres (" << dynamical_parameters(d) << ")\n"
     << "# relative intensity I/<I> - 1 across each family's planes, u in units of the ordered phase's Bragg angle;\n"
     << "# contrast = interior (|u| < 0.75) - flanks (1.25 < |u| < 2); rms_diff = rms of ordered - disordered, |u| < "
        "2\n";
  char line[160];
  std::snprintf(line, sizeof line, "%-9s  %12s %12s %12s  %9s\n", "family", "contrast_ord", "contrast_dis", "change",
                "rms_diff");
  os << line;
  for (size_t i = 0; i < rows.size(); ++i) {
    const FamilyProfileContrast& c = d.families[i];
    std::snprintf(line, sizeof line, "%-9s  %12.4f %12.4f %+12.4f  %9.4f\n", rows[i].family.label().c_str(),
                  c.contrast_ordered, c.contrast_disordered, c.contrast_ordered - c.contrast_disordered,
                  c.rms_difference);
    os << line;
  }
}

nlohmann::json dynamical_json(const DynamicalColumns& d) {
  return {{"nside", d.spec.nside},
          {"accelerating_voltage_kv", d.spec.kilovolts},
          {"max_g_inv_A", d.spec.beams.max_g_inv_A},
          {"strong_limit", d.spec.beams.strong_limit},
          {"weak_limit", d.spec.beams.weak_limit},
          {"proportional_absorption", d.spec.absorption.proportional},
          {"mean_depth_nm", d.spec.depth.mean_depth_A / 10},
          {"bin_width_u", d.bins.width_u},
          {"max_u", d.bins.max_u}};
}

nlohmann::json number_or_null(double v) { return std::isnan(v) ? nlohmann::json(nullptr) : nlohmann::json(v); }

nlohmann::json profile_json(const std::vector<double>& v) {
  nlohmann::json a = nlohmann::json::array();
  for (const double x : v) a.push_back(number_or_null(x));
  return a;
}

}  // namespace

void write_pair_families_text(std::ostream& os, const OrderingPair& pair, const std::vector<PairFamily>& rows,
                              const TableProvenance& prov, const DynamicalColumns* dynamical) {
  provenance_lines(os, prov);
  os << "# pair " << pair.name << "\n"
     << phase_line("ordered:    ", pair.ordered) << phase_line("disordered: ", pair.disordered);
  os << "# sensitivity = (|F_ord|^2 - |F_dis|^2) / (|F_ord|^2 + |F_dis|^2); superlattice if >= "
     << format_number("%g", prov.sensitivity_threshold) << "\n";
  char line[256];
  std::snprintf(line, sizeof line, "%-9s %4s  %9s %9s %9s  %9s %9s %9s  %11s  %s\n", "family", "mult", "d_ord/A",
                "bragg/deg", "|F_ord|/A", "d_dis/A", "bragg/deg", "|F_dis|/A", "sensitivity", "role");
  os << line;
  for (const PairFamily& r : rows) {
    std::snprintf(line, sizeof line, "%-9s %4d  %9.4f %9.3f %9.4f  %9.4f %9.3f %9.4f  %11.3f  %s\n",
                  r.family.label().c_str(), r.family.multiplicity, r.d_ordered_A, rad_to_deg(r.bragg_ordered_rad),
                  r.f_abs_ordered_A, r.d_disordered_A, rad_to_deg(r.bragg_disordered_rad), r.f_abs_disordered_A,
                  r.sensitivity, role_of(r, prov.sensitivity_threshold).c_str());
    os << line;
  }
  if (dynamical) write_dynamical_text(os, rows, *dynamical);
}

void write_pair_families_csv(std::ostream& os, const std::vector<PairFamily>& rows, const TableProvenance& prov,
                             const DynamicalColumns* dynamical) {
  provenance_lines(os, prov);
  if (dynamical) os << "# band profiles on many-beam spheres: " << dynamical_parameters(*dynamical) << "\n";
  os << "family,h,k,l,multiplicity,d_ordered_A,bragg_ordered_deg,f_abs_ordered_A,rel_intensity_ordered,"
        "d_disordered_A,bragg_disordered_deg,f_abs_disordered_A,rel_intensity_disordered,sensitivity,role"
     << (dynamical ? ",dynamical_contrast_ordered,dynamical_contrast_disordered,dynamical_rms_difference" : "") << '\n';
  for (size_t i = 0; i < rows.size(); ++i) {
    const PairFamily& r = rows[i];
    const auto& h = r.family.hkl;
    os << '"' << r.family.label() << "\"," << h[0] << ',' << h[1] << ',' << h[2] << ',' << r.family.multiplicity << ','
       << format_number("%.6f", r.d_ordered_A) << ',' << format_number("%.6f", rad_to_deg(r.bragg_ordered_rad)) << ','
       << format_number("%.6f", r.f_abs_ordered_A) << ',' << format_number("%.6g", r.rel_intensity_ordered) << ','
       << format_number("%.6f", r.d_disordered_A) << ',' << format_number("%.6f", rad_to_deg(r.bragg_disordered_rad))
       << ',' << format_number("%.6f", r.f_abs_disordered_A) << ',' << format_number("%.6g", r.rel_intensity_disordered)
       << ',' << format_number("%.6f", r.sensitivity) << ',' << role_of(r, prov.sensitivity_threshold);
    if (dynamical) {
      const FamilyProfileContrast& c = dynamical->families[i];
      os << ',' << format_number("%.6f", c.contrast_ordered) << ',' << format_number("%.6f", c.contrast_disordered)
         << ',' << format_number("%.6f", c.rms_difference);
    }
    os << '\n';
  }
}

void write_pair_families_json(std::ostream& os, const OrderingPair& pair, const std::vector<PairFamily>& rows,
                              const TableProvenance& prov, const DynamicalColumns* dynamical) {
  nlohmann::json j = provenance_json(prov);
  j["pair"] = {{"name", pair.name}, {"ordered", phase_json(pair.ordered)}, {"disordered", phase_json(pair.disordered)}};
  nlohmann::json fams = nlohmann::json::array();
  if (dynamical) j["parameters"]["dynamical_spheres"] = dynamical_json(*dynamical);
  for (size_t i = 0; i < rows.size(); ++i) {
    const PairFamily& r = rows[i];
    const auto& h = r.family.hkl;
    fams.push_back({{"family", r.family.label()},
                    {"hkl", {h[0], h[1], h[2]}},
                    {"multiplicity", r.family.multiplicity},
                    {"d_ordered_A", r.d_ordered_A},
                    {"bragg_ordered_deg", rad_to_deg(r.bragg_ordered_rad)},
                    {"f_abs_ordered_A", r.f_abs_ordered_A},
                    {"rel_intensity_ordered", r.rel_intensity_ordered},
                    {"d_disordered_A", r.d_disordered_A},
                    {"bragg_disordered_deg", rad_to_deg(r.bragg_disordered_rad)},
                    {"f_abs_disordered_A", r.f_abs_disordered_A},
                    {"rel_intensity_disordered", r.rel_intensity_disordered},
                    {"sensitivity", r.sensitivity},
                    {"role", role_of(r, prov.sensitivity_threshold)}});
    if (dynamical) {
      const FamilyProfileContrast& c = dynamical->families[i];
      fams.back()["dynamical"] = {{"u", c.u},
                                  {"profile_ordered", profile_json(c.ordered)},
                                  {"profile_disordered", profile_json(c.disordered)},
                                  {"contrast_ordered", number_or_null(c.contrast_ordered)},
                                  {"contrast_disordered", number_or_null(c.contrast_disordered)},
                                  {"rms_difference", number_or_null(c.rms_difference)}};
    }
  }
  j["families"] = fams;
  os << j.dump(2) << '\n';
}

void write_phase_families_text(std::ostream& os, const Phase& phase, const std::vector<PhaseFamily>& rows,
                               const TableProvenance& prov) {
  provenance_lines(os, prov);
  os << phase_line("phase: ", phase);
  char line[200];
  std::snprintf(line, sizeof line, "%-9s %4s  %9s %9s %9s %13s\n", "family", "mult", "d/A", "bragg/deg", "|F|/A",
                "rel_intensity");
  os << line;
  for (const PhaseFamily& r : rows) {
    std::snprintf(line, sizeof line, "%-9s %4d  %9.4f %9.3f %9.4f %13.4f\n", r.family.label().c_str(),
                  r.family.multiplicity, r.family.d_A, rad_to_deg(r.bragg_rad), r.f_abs_A, r.rel_intensity);
    os << line;
  }
}

void write_phase_families_csv(std::ostream& os, const std::vector<Phase>& phases,
                              const std::vector<std::vector<PhaseFamily>>& tables, const TableProvenance& prov) {
  provenance_lines(os, prov);
  os << "phase,family,h,k,l,multiplicity,d_A,bragg_deg,f_abs_A,rel_intensity\n";
  for (size_t p = 0; p < phases.size(); ++p)
    for (const PhaseFamily& r : tables[p]) {
      const auto& h = r.family.hkl;
      os << phases[p].name << ",\"" << r.family.label() << "\"," << h[0] << ',' << h[1] << ',' << h[2] << ','
         << r.family.multiplicity << ',' << format_number("%.6f", r.family.d_A) << ','
         << format_number("%.6f", rad_to_deg(r.bragg_rad)) << ',' << format_number("%.6f", r.f_abs_A) << ','
         << format_number("%.6g", r.rel_intensity) << '\n';
    }
}

void write_phase_families_json(std::ostream& os, const std::vector<Phase>& phases,
                               const std::vector<std::vector<PhaseFamily>>& tables, const TableProvenance& prov) {
  nlohmann::json j = provenance_json(prov);
  nlohmann::json arr = nlohmann::json::array();
  for (size_t p = 0; p < phases.size(); ++p) {
    nlohmann::json ph = phase_json(phases[p]);
    nlohmann::json fams = nlohmann::json::array();
    for (const PhaseFamily& r : tables[p]) {
      const auto& h = r.family.hkl;
      fams.push_back({{"family", r.family.label()},
                      {"hkl", {h[0], h[1], h[2]}},
                      {"multiplicity", r.family.multiplicity},
                      {"d_A", r.family.d_A},
                      {"bragg_deg", rad_to_deg(r.bragg_rad)},
                      {"f_abs_A", r.f_abs_A},
                      {"rel_intensity", r.rel_intensity}});
    }
    ph["families"] = fams;
    arr.push_back(ph);
  }
  j["phases"] = arr;
  os << j.dump(2) << '\n';
}

}  // namespace orderband
