// Reading a phase from CIF with gemmi (the only file that includes gemmi's CIF reader).
#define GEMMI_WRITE_IMPLEMENTATION  // gemmi's number formatting (system stb), defined once
#include <gemmi/cif.hpp>
#include <gemmi/smcif.hpp>
#include <gemmi/symmetry.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/input_file.hpp"
#include "orderband/phase_cif.hpp"
#include "orderband/scattering.hpp"

namespace orderband {
namespace {

const gemmi::SpaceGroup* space_group_of(const gemmi::SmallStructure& st, gemmi::cif::Block& block,
                                        const std::string& origin) {
  if (!st.spacegroup_hm.empty()) {
    if (const gemmi::SpaceGroup* sg = st.find_spacegroup()) return sg;
    fail(origin, ": unknown space group '", st.spacegroup_hm, "'");
  }
  for (const char* tag : {"_space_group_IT_number", "_symmetry_Int_Tables_number"}) {
    if (const std::string* v = block.find_value(tag)) {
      const double number = gemmi::cif::as_number(*v);
      if (!(number >= 1 && number <= 230 && number == std::floor(number)))
        fail(origin, ": space group number ", v->substr(0, 40), " is not a whole number from 1 to 230");
      if (const gemmi::SpaceGroup* sg = gemmi::find_spacegroup_by_number(static_cast<int>(number))) return sg;
      fail(origin, ": unknown space group number ", *v);
    }
  }
  for (const char* tag : {"_space_group_symop_operation_xyz", "_symmetry_equiv_pos_as_xyz"}) {
    gemmi::cif::Column col = block.find_values(tag);
    if (col.length() == 0) continue;
    std::vector<gemmi::Op> ops;
    for (const std::string& item : col) ops.push_back(gemmi::parse_triplet(gemmi::cif::as_string(item)));
    gemmi::GroupOps gops = gemmi::split_centering_vectors(ops);
    if (const gemmi::SpaceGroup* sg = gemmi::find_spacegroup_by_ops(gops)) return sg;
    fail(origin, ": the symmetry operations match no standard space group");
  }
  fail(origin, ": no space group (give _space_group_name_H-M_alt, an IT number or symmetry operations)");
}

Phase phase_from_block(gemmi::cif::Block& block, const std::string& origin) {
  gemmi::SmallStructure st = gemmi::make_small_structure_from_block(block);
  bool has_cell = true;
  for (const char* tag : {"_cell_length_a", "_cell_length_b", "_cell_length_c", "_cell_angle_alpha", "_cell_angle_beta",
                          "_cell_angle_gamma"}) {
    const std::string* v = block.find_value(tag);
    has_cell = has_cell && v && !gemmi::cif::is_null(*v);
  }
  if (!has_cell || !(st.cell.a > 0 && st.cell.b > 0 && st.cell.c > 0))
    fail(origin, ": no complete unit cell (_cell_length_a/b/c and _cell_angle_alpha/beta/gamma)");
  // Named limits on the values as written (gemmi falls back to a 1 Å cube for a cell it cannot
  // build): lengths within [0.5, 100] Å (every phase the tool pairs; a cell of 10⁶ Å made the
  // family enumeration run away), angles within (0, 180)° and a cell of positive volume.
  double given[6];
  const char* tags[6] = {"_cell_length_a",    "_cell_length_b",   "_cell_length_c",
                         "_cell_angle_alpha", "_cell_angle_beta", "_cell_angle_gamma"};
  for (int k = 0; k < 6; ++k) {
    given[k] = gemmi::cif::as_number(*block.find_value(tags[k]));
    const bool ok = k < 3 ? given[k] >= 0.5 && given[k] <= 100 : given[k] > 0 && given[k] < 180;
    if (!ok)
      fail(origin, ": ", tags[k], " = ", given[k], k < 3 ? " Å is outside [0.5, 100] Å" : "° is outside (0, 180)°");
  }
  {
    const double ca = std::cos(given[3] * M_PI / 180), cb = std::cos(given[4] * M_PI / 180),
                 cg = std::cos(given[5] * M_PI / 180);
    if (!(1 - ca * ca - cb * cb - cg * cg + 2 * ca * cb * cg > 1e-6))
      fail(origin, ": the cell angles ", given[3], ", ", given[4], ", ", given[5],
           "° give no cell (zero or imaginary volume)");
  }
  if (st.sites.empty()) fail(origin, ": no atom sites (_atom_site_label, _atom_site_fract_x/y/z)");
  const gemmi::SpaceGroup* sg = space_group_of(st, block, origin);
  st.spacegroup_hm = sg->xhm();
  st.cell.set_cell_images_from_spacegroup(sg);

  Phase phase;
  phase.name = block.name;
  phase.source = origin;
  phase.cell = UnitCell(st.cell.a, st.cell.b, st.cell.c, st.cell.alpha, st.cell.beta, st.cell.gamma);
  phase.space_group_hm = sg->hm;
  phase.space_group_number = sg->number;
  phase.laue_class = sg->laue_str();

  for (const gemmi::Op& op : sg->operations().sym_ops) {
    Eigen::Matrix3i r;
    for (int i = 0; i < 3; ++i)
      for (int j = 0; j < 3; ++j) r(i, j) = op.rot[i][j] / gemmi::Op::DEN;
    bool seen = false;
    for (const auto& q : phase.point_group_ops) seen = seen || q == r;
    if (!seen) phase.point_group_ops.push_back(r);
  }

  auto convert = [&](const gemmi::SmallStructure::Site& s) {
    AtomSite a;
    a.label = s.label;
    a.element = s.element.name();
    if (s.element == gemmi::El::X || !has_electron_scattering_factor(a.element))
      fail(origin, ": site '", s.label, "' has unknown element '", s.type_symbol,
           "' (give _atom_site_type_symbol as an element symbol, e.g. Ni)");
    a.fract = Eigen::Vector3d(s.fract.x, s.fract.y, s.fract.z);
    if (!a.fract.allFinite())
      fail(origin, ": site '", s.label, "' has a coordinate that is not a number (", s.fract.x, ", ", s.fract.y, ", ",
           s.fract.z, ")");
    if (!(s.occ >= 0 && s.occ <= 1.0 + 1e-9))
      fail(origin, ": site '", s.label, "' has occupancy ", s.occ, " outside [0, 1]");
    a.occupancy = s.occ;
    a.u_iso_A2 = s.u_iso;
    if (!(s.u_iso >= 0 && s.u_iso <= 1))
      fail(origin, ": site '", s.label, "' has displacement U = ", s.u_iso, " Å², outside [0, 1] Å²");
    return a;
  };
  for (const auto& s : st.sites) phase.asymmetric_sites.push_back(convert(s));
  double occupied = 0;
  for (const AtomSite& a : phase.asymmetric_sites) occupied += a.occupancy;
  if (!(occupied > 0)) fail(origin, ": every site has occupancy 0 (no atom scatters)");
  for (const auto& s : st.get_all_unit_cell_sites()) phase.unit_cell_sites.push_back(convert(s));
  return phase;
}

}  // namespace

Phase parse_phase_cif(const std::string& cif_text, const std::string& origin) {
  gemmi::cif::Document doc;
  try {
    doc = gemmi::cif::read_string(cif_text);
  } catch (const std::exception& e) {
    fail(origin, ": not a readable CIF file (", e.what(), ")");
  }
  if (doc.blocks.empty()) fail(origin, ": CIF file has no data block");
  try {
    return phase_from_block(doc.blocks.front(), origin);
  } catch (const Error&) {
    throw;
  } catch (const std::exception& e) {
    fail(origin, ": ", e.what());
  }
}

Phase load_phase_cif(const std::string& path) {
  require_regular_file(path, "CIF file");
  std::ifstream in(path, std::ios::binary);
  if (!in) fail("cannot read CIF file '", path, "' (missing or unreadable)");
  std::ostringstream text;
  text << in.rdbuf();
  Phase phase = parse_phase_cif(text.str(), path);
  if (phase.name.empty()) phase.name = std::filesystem::path(path).stem().string();
  return phase;
}

}  // namespace orderband
