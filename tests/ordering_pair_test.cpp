// Superlattice sensitivity of the shipped ordered/disordered pairs.
#include "orderband/ordering_pair.hpp"

#include <gtest/gtest.h>

#include <map>

#include "orderband/error.hpp"
#include "orderband/pair_catalog.hpp"
#include "test_support.hpp"

namespace orderband {
namespace {

OrderingPair shipped(const std::string& ordered, const std::string& disordered) {
  return load_pair(test::crystal_data(ordered), test::crystal_data(disordered));
}

std::map<std::string, PairFamily> by_label(const std::vector<PairFamily>& rows) {
  std::map<std::string, PairFamily> m;
  for (const auto& r : rows) m[r.family.label()] = r;
  return m;
}

TEST(OrderingPair, NickelGammaPrimeSelectsTheSuperlatticeFamilies) {
  // Kinematic L1₂ rules (Cullity & Stock, 3rd ed., order–disorder chapter): mixed-parity
  // families exist only in γ′; unmixed families exist in both with |F| within ~10 %.
  const auto rows = by_label(pair_family_table(shipped("ni3al-gamma-prime.cif", "ni-gamma.cif"), 20.0, 0.9));
  for (const char* f : {"{100}", "{110}", "{210}", "{211}"}) {
    EXPECT_NEAR(rows.at(f).sensitivity, 1.0, 1e-9) << f;
    EXPECT_EQ(rows.at(f).f_abs_disordered_A, 0.0) << f;
  }
  for (const char* f : {"{111}", "{200}", "{220}", "{311}"}) EXPECT_LT(std::abs(rows.at(f).sensitivity), 0.2) << f;
  // The superlattice bands are weak: |F(100)|²/|F(111)|² ≈ 0.011 (computed, Peng factors).
  EXPECT_NEAR(rows.at("{100}").rel_intensity_ordered, 0.0116, 0.002);
}

TEST(OrderingPair, SelectionFollowsFromStructureFactorsForEveryShippedPair) {
  // Co-base L1₂ and B2/A2: the same rules must come out of the CIF files alone.
  // B2: h+k+l odd are superlattice families (f_Fe − f_Al), even ones fundamental.
  const auto feal = pair_family_table(shipped("feal-b2.cif", "feal-a2.cif"), 20.0, 1.0);
  for (const auto& r : feal) {
    const bool odd = r.family.hkl.sum() % 2 != 0;
    EXPECT_EQ(r.sensitivity >= 0.5, odd) << r.family.label();
  }
  const auto co =
      by_label(superlattice_families(pair_family_table(shipped("co3alw-gamma-prime.cif", "co-gamma.cif"), 20.0, 1.0)));
  EXPECT_TRUE(co.count("{100}") && co.count("{110}") && co.count("{210}") && co.count("{211}"));
  EXPECT_FALSE(co.count("{111}") || co.count("{200}"));
}

TEST(OrderingPair, BraggAnglesPerPhase) {
  const auto rows = by_label(pair_family_table(shipped("ni3al-gamma-prime.cif", "ni-gamma.cif"), 20.0, 1.0));
  // γ′ a = 3.572 Å, d111 = 2.0623 Å; θ_B = asin(0.085885 / (2 · 2.0623)) = 1.1932°.
  EXPECT_NEAR(rows.at("{111}").d_ordered_A, 3.572 / std::sqrt(3.0), 1e-9);
  EXPECT_NEAR(rows.at("{111}").bragg_ordered_rad * 180 / M_PI, 1.1932, 1e-3);
  EXPECT_NEAR(rows.at("{111}").d_disordered_A, 3.585 / std::sqrt(3.0), 1e-9);
}

TEST(OrderingPair, RejectsIncompatibleCells) {
  EXPECT_THROW(shipped("ni3al-gamma-prime.cif", "feal-a2.cif"), Error);  // 3.572 vs 2.909 Å
}

TEST(PairCatalog, NamedPairsResolve) {
  for (const char* name : {"ni", "co", "feal"}) {
    const OrderingPair p = load_named_pair(name);
    EXPECT_EQ(p.name, name);
    EXPECT_FALSE(p.ordered.unit_cell_sites.empty());
  }
  try {
    load_named_pair("brass");
    FAIL() << "expected an error";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("unknown phase pair 'brass'"), std::string::npos);
    EXPECT_NE(std::string(e.what()).find("ni"), std::string::npos);
  }
}

}  // namespace
}  // namespace orderband
