// Warnings when a map's results rest on too few points.
#include <gtest/gtest.h>

#include <cmath>

#include "orderband/error.hpp"
#include "orderband/map_scan.hpp"
#include "orderband/mismatch_systematic.hpp"

namespace orderband {
namespace {

MapResults results_with(size_t points, size_t oriented, size_t measured) {
  MapResults r;
  r.orientations.orientation.assign(points, std::nullopt);
  for (size_t k = 0; k < oriented; ++k) r.orientations.orientation[k] = Rotation();
  r.fraction.reason.assign(points, static_cast<uint8_t>(FractionReason::no_orientation));
  for (size_t k = 0; k < measured; ++k) r.fraction.reason[k] = static_cast<uint8_t>(FractionReason::ok);
  r.fraction.estimator = "profile";
  return r;
}

/// As the learned estimator leaves its results without reference regions: each grain's matrix is
/// the zero.
MapResults learned_results_with(size_t points, size_t oriented, size_t measured) {
  MapResults r = results_with(points, oriented, measured);
  r.fraction.estimator = "learned";
  r.fraction.zero_is_matrix = true;
  return r;
}

TEST(MapWarnings, SayWhenTheResultsRestOnFewPoints) {
  // 256 points of which 17 keep an orientation and a fraction (as five hot pixels per pattern with
  // the filter off gave): both warnings, with the counts.
  const std::vector<std::string> w = map_warnings(results_with(256, 17, 17));
  ASSERT_EQ(w.size(), 2u);
  EXPECT_NE(w[0].find("93 % of the points have no orientation (239 of 256)"), std::string::npos) << w[0];
  EXPECT_NE(w[1].find("rests on 17 of 256 points (7 %)"), std::string::npos) << w[1];
  // 85 % oriented and measured: no warning; the learned estimator always says what it does not measure.
  EXPECT_TRUE(map_warnings(results_with(256, 218, 218)).empty());
  MapResults learned = learned_results_with(256, 256, 256);
  ASSERT_EQ(map_warnings(learned).size(), 1u);
  EXPECT_NE(map_warnings(learned)[0].find("tertiary"), std::string::npos);
  // With reference regions the zero is the region's: no such warning.
  learned.fraction.zero_is_matrix = false;
  EXPECT_TRUE(map_warnings(learned).empty());
}

TEST(MapWarnings, SayWhenTheFootprintReachesPastTheNeighboursOfAGrainBoundary) {
  // The learned estimator takes other lattices out next to a grain boundary only; a footprint
  // reaching 3 rows (as a 2.9 × elongation along the tilt at the suite's step did) leaves points two
  // and three rows from a boundary with part of the other lattice, so the warning names the reach.
  MapResults r = learned_results_with(1600, 1600, 1600);
  r.fraction.zero_is_matrix = false;
  EXPECT_TRUE(map_warnings(r).empty());  // a reach of one step: next to the boundary only
  r.fraction.beam_reach = {3, 1};
  const std::vector<std::string> w = map_warnings(r);
  ASSERT_EQ(w.size(), 1u);
  EXPECT_NE(w[0].find("reaches 3 rows and 1 column from each point"), std::string::npos) << w[0];
  // A single-phase result has no particles to doubt: that warning speaks for it instead.
  r.fraction.two_phases = false;
  for (const std::string& s : map_warnings(r)) EXPECT_EQ(s.find("footprint"), std::string::npos) << s;
}

TEST(MapWarnings, SayWhenTheAutomaticChoiceFellToTheModelLedEstimator) {
  // "auto" on 576 points runs the model-led estimator and says so, with the count and the
  // threshold; asked for by name, the model-led estimator runs without that warning.
  MapResults r = results_with(576, 576, 576);
  r.fraction.estimator_requested = "auto", r.fraction.estimator_choice = EstimatorChoice::too_few_points;
  const std::vector<std::string> w = map_warnings(r);
  ASSERT_EQ(w.size(), 1u);
  EXPECT_NE(w[0].find("576 points, fewer than the 1000"), std::string::npos) << w[0];
  r.fraction.estimator_requested = "profile", r.fraction.estimator_choice = EstimatorChoice::asked_for;
  EXPECT_TRUE(map_warnings(r).empty());
  // On 1,600 points only mixture end members make "auto" run the model-led estimator: said so.
  MapResults mixture = results_with(1600, 1600, 1600);
  mixture.fraction.estimator_requested = "auto";
  mixture.fraction.estimator_choice = EstimatorChoice::mixture_end_members;
  ASSERT_EQ(map_warnings(mixture).size(), 1u);
  EXPECT_NE(map_warnings(mixture)[0].find("mixture end members rescale the model-led estimates"), std::string::npos);
}

TEST(MapWarnings, DoubtAboutOnePhaseFromTheLearnedEstimator) {
  // One phase reported from 576 points (a 24 × 24 map, where a quarter of ordered area was missed
  // on 48 × 48 px patterns): a warning with the count; from 1,600 points with no structure: a
  // warning that the phase it names comes from the model's intensities; with structure above the
  // learner's threshold (z 5) that it could not place: a warning with z.
  MapResults r = learned_results_with(576, 576, 576);
  r.fraction.two_phases = false;
  r.fraction.learned_spatial_z = 2.0;
  std::vector<std::string> w = map_warnings(r);
  ASSERT_EQ(w.size(), 2u);
  EXPECT_NE(w[1].find("one phase from 576 points"), std::string::npos) << w[1];
  MapResults large = learned_results_with(1600, 1600, 1600);
  large.fraction.two_phases = false;
  large.fraction.learned_spatial_z = 2.0;
  w = map_warnings(large);
  ASSERT_EQ(w.size(), 2u);  // the phase it names rests on the model's band intensities
  EXPECT_NE(w[1].find("found one phase and names it disordered"), std::string::npos) << w[1];
  large.fraction.learned_spatial_z = 5.86;
  w = map_warnings(large);
  ASSERT_EQ(w.size(), 2u);
  EXPECT_NE(w[1].find("spatial structure (z = 5.9)"), std::string::npos) << w[1];
}

TEST(FractionEstimatorChoice, AutoLearnsFromAThousandPointsAndNamedChoicesStand) {
  // "auto" takes the learned estimator from kLearnedEstimatorMinPoints grid points (a 32 × 32 map,
  // 1,024, where the learned one found its second phase on 48 × 48 px patterns) and the model-led
  // one below (a 31 × 31 map, 961) or where mixture end members are asked for (they rescale the
  // model-led estimates); an estimator asked for by name runs whatever the size, and the learned
  // one with mixture end members is refused (it sets its own end members from the scan).
  auto in_use = [](FractionEstimator e, size_t points, EndMemberMode ends = EndMemberMode::model) {
    FractionSpec spec;
    spec.estimator = e, spec.end_members = ends;
    return estimator_in_use(spec, points).estimator;
  };
  EXPECT_EQ(in_use(FractionEstimator::automatic, 32 * 32), FractionEstimator::learned);
  EXPECT_EQ(in_use(FractionEstimator::automatic, 1000), FractionEstimator::learned);
  EXPECT_EQ(in_use(FractionEstimator::automatic, 999), FractionEstimator::profile);
  EXPECT_EQ(in_use(FractionEstimator::automatic, 31 * 31), FractionEstimator::profile);
  EXPECT_EQ(in_use(FractionEstimator::automatic, 1600, EndMemberMode::mixture), FractionEstimator::profile);
  EXPECT_EQ(in_use(FractionEstimator::automatic, 1600, EndMemberMode::regions), FractionEstimator::learned);
  EXPECT_EQ(in_use(FractionEstimator::learned, 144), FractionEstimator::learned);
  EXPECT_EQ(in_use(FractionEstimator::profile, 1'000'000), FractionEstimator::profile);
  EXPECT_EQ(in_use(FractionEstimator::windows, 1'000'000), FractionEstimator::windows);
  EXPECT_THROW(in_use(FractionEstimator::learned, 1600, EndMemberMode::mixture), Error);
  EXPECT_EQ(name_of(FractionEstimator::automatic), "auto");
}

TEST(MismatchSystematic, OnlyWhereTheEndMembersAreTheEstimatorsOwn) {
  // The suite measured each estimator with its own end members: the learned one's placement, the
  // model-led one's model references. A disordered reference region (or a mixture fit) moves the
  // zero, a set-up the suite's figures do not describe: no systematic is then given.
  EXPECT_EQ(mismatch_systematic_of_run("learned", false).rms, mismatch_systematic("learned").rms);
  EXPECT_EQ(mismatch_systematic_of_run("profile", false).rms, mismatch_systematic("profile").rms);
  EXPECT_LT(mismatch_systematic_of_run("learned", false).rms, mismatch_systematic_of_run("profile", false).rms);
  EXPECT_TRUE(std::isnan(mismatch_systematic_of_run("learned", true).rms));
  EXPECT_TRUE(std::isnan(mismatch_systematic_of_run("profile", true).rms));
  EXPECT_TRUE(std::isnan(mismatch_systematic_of_run("windows", false).rms));
}

}  // namespace
}  // namespace orderband
