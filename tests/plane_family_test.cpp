// Plane-family enumeration: multiplicities, equivalents, d-spacings, ordering.
#include "orderband/plane_family.hpp"
#include "orderband/phase_cif.hpp"

#include <gtest/gtest.h>

#include <map>

#include "orderband/error.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

std::map<std::string, PlaneFamily> by_label(const std::vector<PlaneFamily>& fams) {
  std::map<std::string, PlaneFamily> m;
  for (const auto& f : fams) m[f.label()] = f;
  return m;
}

TEST(PlaneFamilies, CubicMultiplicitiesPlanesCountedOnce) {
  // Cubic m-3m multiplicities with hkl and −h−k−l counted as one plane: half the
  // powder-diffraction multiplicities of International Tables Vol. A / Cullity & Stock
  // (6, 12, 8, 24, 24, 48).
  const Phase p = load_phase_cif(test::crystal_data("ni3al-gamma-prime.cif"));
  const auto fams = by_label(enumerate_plane_families(p, 0.9));
  EXPECT_EQ(fams.at("{100}").multiplicity, 3);
  EXPECT_EQ(fams.at("{110}").multiplicity, 6);
  EXPECT_EQ(fams.at("{111}").multiplicity, 4);
  EXPECT_EQ(fams.at("{210}").multiplicity, 12);
  EXPECT_EQ(fams.at("{211}").multiplicity, 12);
  EXPECT_EQ(fams.at("{321}").multiplicity, 24);
  EXPECT_EQ(fams.at("{200}").multiplicity, 3);
}

TEST(PlaneFamilies, MembersAreDistinctUnitNormalsAtTheFamilyD) {
  const Phase p = load_phase_cif(test::crystal_data("ni-fcc.cif"));
  for (const PlaneFamily& f : enumerate_plane_families(p, 0.8)) {
    ASSERT_EQ(f.members.size(), f.normals.size());
    for (size_t i = 0; i < f.members.size(); ++i) {
      EXPECT_NEAR(p.cell.d_spacing_A(f.members[i]), f.d_A, 1e-12);
      EXPECT_NEAR(f.normals[i].vec().norm(), 1.0, 1e-12);
      for (size_t j = 0; j < i; ++j)  // no plane twice, not even as its opposite
        EXPECT_LT(std::abs(f.normals[i].dot(f.normals[j])), 1 - 1e-9);
    }
  }
}

TEST(PlaneFamilies, SortedByDecreasingDWithinLimit) {
  const Phase p = load_phase_cif(test::crystal_data("ni-fcc.cif"));
  const auto fams = enumerate_plane_families(p, 1.0);
  ASSERT_FALSE(fams.empty());
  EXPECT_EQ(fams.front().label(), "{100}");  // the lattice enumeration includes extinct families
  for (size_t i = 1; i < fams.size(); ++i) EXPECT_GE(fams[i - 1].d_A, fams[i].d_A - 1e-12);
  EXPECT_GE(fams.back().d_A, 1.0);
  // Ni a = 3.5239 Å: d(100) = a. Sum of multiplicities equals the plane count in the box.
  EXPECT_NEAR(fams.front().d_A, 3.5239, 1e-12);
  int planes = 0;
  for (const auto& f : fams) planes += f.multiplicity;
  int brute = 0;
  for (int h = -4; h <= 4; ++h)
    for (int k = -4; k <= 4; ++k)
      for (int l = -4; l <= 4; ++l)
        if ((h || k || l) && p.cell.d_spacing_A({h, k, l}) >= 1.0) ++brute;
  EXPECT_EQ(2 * planes, brute);
}

TEST(PlaneFamilies, HexagonalFamilies) {
  // Hexagonal 6/mmm: {0001} has 1 plane, {10-10} (written 100 in three-index form) 3, {10-11} 6.
  const Phase p = parse_phase_cif(
      "data_h\n_cell_length_a 3.21\n_cell_length_b 3.21\n_cell_length_c 5.21\n_cell_angle_alpha 90\n"
      "_cell_angle_beta 90\n_cell_angle_gamma 120\n_space_group_name_H-M_alt 'P 63/m m c'\nloop_\n"
      "_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\n"
      "Mg1 Mg 0.3333333 0.6666667 0.25\n",
      "hex.cif");
  const auto fams = by_label(enumerate_plane_families(p, 1.0));
  EXPECT_EQ(fams.at("{001}").multiplicity, 1);
  EXPECT_EQ(fams.at("{100}").multiplicity, 3);
  EXPECT_EQ(fams.at("{101}").multiplicity, 6);
  EXPECT_NEAR(fams.at("{100}").d_A, 3.21 * std::sqrt(3.0) / 2, 1e-9);
}

TEST(PlaneFamilies, RejectsBadLimit) {
  const Phase p = load_phase_cif(test::crystal_data("ni-fcc.cif"));
  EXPECT_THROW(enumerate_plane_families(p, 0.0), Error);
  EXPECT_THROW(enumerate_plane_families(p, 0.001), Error);
}

}  // namespace
}  // namespace orderband
