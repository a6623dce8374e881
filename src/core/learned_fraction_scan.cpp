// The data-led estimator run on a scan: features per point, the model's first guess and
// signatures per grain, then learn_fraction.
#include "learned_fraction_scan.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <map>
#include <utility>

#include <Eigen/Dense>

#include "grain_comparison.hpp"
#include "grain_profilers.hpp"
#include "orderband/detection_limit.hpp"
#include "orderband/learned_fraction.hpp"
#include "row_loop.hpp"

namespace orderband {

namespace {

/// The model's first guess of a point's fraction: the point's superlattice profile shapes (each
/// family's mean over its bins removed, so that offsets and fundamental contrast do not enter)
/// projected on the model's ordered − disordered difference. `model[phase]` and `x` hold
/// families × bins features (NaN: bin not covered).
double model_first_guess(const std::array<std::vector<double>, 2>& model, const float* x, size_t bins,
                         size_t superlattice_families) {
  double num = 0, den = 0;
  auto covered = [&](size_t i) { return !std::isnan(x[i]) && !std::isnan(model[0][i]); };
  for (size_t f = 0; f < superlattice_families; ++f) {
    double mx = 0, m0 = 0, m1 = 0, c = 0;
    for (size_t i = f * bins; i < (f + 1) * bins; ++i)
      if (covered(i)) mx += x[i], m0 += model[0][i], m1 += model[1][i], c += 1;
    if (c < 2) continue;
    mx /= c, m0 /= c, m1 /= c;
    for (size_t i = f * bins; i < (f + 1) * bins; ++i) {
      if (!covered(i)) continue;
      const double d = (model[1][i] - m1) - (model[0][i] - m0);
      num += d * ((x[i] - mx) - (model[0][i] - m0)), den += d * d;
    }
  }
  return den > 0 ? num / den : std::nan("");
}

/// Whether a chosen fundamental family lies on the planes of family `f` (hkl a multiple of f's):
/// in L1₂ every superlattice family does ({100} inside {200}), but only the strong low-index ones
/// are chosen, and a change of their intensity with ordering would swamp a faint interior excess.
bool covered_by_fundamental(const PairFamily& f, const std::vector<PairFamily>& chosen, size_t first_fundamental) {
  for (size_t j = first_fundamental; j < chosen.size(); ++j)
    for (int m = 2; m <= 4; ++m)
      if (chosen[j].family.hkl == m * f.family.hkl) return true;
  return false;
}

/// The ordering signature of one grain (LearnedInputs::ordering_signature): the model's ordered −
/// disordered profile difference at the grain's orientation on the superlattice families no chosen
/// fundamental family covers (all of them if every one is covered), bins with |u| < 1.75 only,
/// each family's mean over them removed; 0 elsewhere. Where a covering fundamental band changes
/// with ordering (in strength or edge lines), its change would outweigh the faint superlattice
/// band; the uncovered families see only the new band and the crossings of other bands, which the
/// model's difference does not contain.
std::vector<double> ordering_signature(const BandProfiler& features, const FractionFamilies& fam,
                                       const std::array<std::vector<double>, 2>& model) {
  const size_t bins = static_cast<size_t>(features.bins()), first_fundamental = fam.first_fundamental;
  std::vector<uint8_t> use(first_fundamental, 0);
  for (size_t f = 0; f < first_fundamental; ++f)
    use[f] = !covered_by_fundamental(fam.chosen[f], fam.chosen, first_fundamental);
  if (std::find(use.begin(), use.end(), 1) == use.end()) std::fill(use.begin(), use.end(), 1);
  std::vector<double> signature(fam.count() * bins, 0.0);
  for (size_t f = 0; f < first_fundamental; ++f) {
    if (!use[f]) continue;
    double mean = 0, count = 0;
    auto inside = [&](size_t b) {
      const size_t i = f * bins + b;
      const double u = std::abs(features.bin_centre_u(static_cast<int>(b)));
      return (u < 0.75 || (u > 1.25 && u < 1.75)) && !std::isnan(model[0][i]) && !std::isnan(model[1][i]);
    };
    for (size_t b = 0; b < bins; ++b)
      if (inside(b)) mean += model[1][f * bins + b] - model[0][f * bins + b], count += 1;
    if (count < 2) continue;
    mean /= count;
    for (size_t b = 0; b < bins; ++b)
      if (inside(b)) signature[f * bins + b] = model[1][f * bins + b] - model[0][f * bins + b] - mean;
  }
  return signature;
}

/// At a grain boundary the beam sees other lattices. Each `direction` (families × bins, NaN where
/// unknown) is the change of this grain's features per unit share of one other lattice; their
/// components in the point's features `x` (joint least squares about the grain's mean features,
/// bins no point of the grain covers left out) are taken out. The model gives the band positions;
/// the shares come from the data. A `beside` direction (the grain's own ordering) is fitted with
/// them but stays in the features, so that the shares do not take the point's own ordering.
/// Returns each direction's share (empty if none could be fitted).
std::vector<double> take_out_other_lattices(float* x, const std::vector<double>& grain_mean,
                                            const std::vector<double>& grain_count,
                                            std::vector<std::vector<double>> directions,
                                            const std::vector<double>& beside = {}) {
  const size_t taken_out = directions.size();
  if (taken_out == 0) return {};
  if (!beside.empty()) directions.push_back(beside);
  const size_t m = directions.size();
  const size_t p = grain_mean.size();
  auto usable = [&](size_t i) {
    if (std::isnan(x[i]) || !(grain_count[i] > 0)) return false;
    for (const auto& d : directions)
      if (std::isnan(d[i])) return false;
    return true;
  };
  Eigen::MatrixXd normal = Eigen::MatrixXd::Zero(m, m);
  Eigen::VectorXd rhs = Eigen::VectorXd::Zero(m);
  for (size_t i = 0; i < p; ++i) {
    if (!usable(i)) continue;
    for (size_t a = 0; a < m; ++a) {
      rhs[a] += (x[i] - grain_mean[i]) * directions[a][i];
      for (size_t b = 0; b <= a; ++b) normal(a, b) += directions[a][i] * directions[b][i];
    }
  }
  normal = normal.selfadjointView<Eigen::Lower>();
  const Eigen::LDLT<Eigen::MatrixXd> solve(normal);
  if (solve.info() != Eigen::Success || !(normal.diagonal().minCoeff() > 0)) return {};
  const Eigen::VectorXd share = solve.solve(rhs);
  if (!share.allFinite()) return {};
  for (size_t i = 0; i < p; ++i)
    if (usable(i))
      for (size_t a = 0; a < taken_out; ++a) x[i] -= static_cast<float>(share[a] * directions[a][i]);
  return {share.data(), share.data() + taken_out};
}

/// End members as the learned estimator found them: mean, spread and share of the measured points
/// on either side of one half.
void end_members_either_side_of_half(FractionResults& r) {
  double sum[2] = {0, 0}, sq[2] = {0, 0}, cnt[2] = {0, 0};
  for (size_t k = 0; k < r.raw.size(); ++k) {
    if (r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
    const int c = r.raw[k] >= 0.5;
    sum[c] += r.raw[k], sq[c] += double(r.raw[k]) * r.raw[k], cnt[c] += 1;
  }
  const double total = cnt[0] + cnt[1];
  for (int c = 0; c < 2; ++c) {
    EndMember& e = c ? r.ordered : r.disordered;
    if (cnt[c] > 0)
      e.mean = sum[c] / cnt[c], e.sd = std::sqrt(std::max(0.0, sq[c] / cnt[c] - e.mean * e.mean)),
      e.weight = cnt[c] / total;
  }
}

/// What the learned estimator works with: features from patterns kept linear in the phase
/// mixture, and the model processed the same way.
struct LinearFeatures {
  const FractionScan& scan;
  BandProfiler features;
  Preprocessor data, model;
  size_t bins, p;

  static PreprocessSpec without_unit_variance(PreprocessSpec spec) {
    spec.unit_variance = false;
    return spec;
  }

  LinearFeatures(const FractionScan& s, const PreprocessSpec& data_spec, const PreprocessSpec& model_spec)
      : scan(s),
        features(s.families.profile, s.spec.learned_profile),
        data(without_unit_variance(data_spec), s.source->width(), s.source->height(), s.pre.static_background()),
        model(without_unit_variance(model_spec), s.source->width(), s.source->height(), s.pre.static_background()),
        bins(static_cast<size_t>(features.bins())),
        p(s.families.count() * bins) {}

  /// Both phases' model features at each grain's orientation (index = grain id).
  std::vector<std::array<std::vector<double>, 2>> model_features() const {
    std::vector<std::array<std::vector<double>, 2>> out(scan.grains + 1);
#pragma omp parallel for schedule(dynamic)
    for (int g = 1; g <= scan.grains; ++g) {
      std::vector<float> img(scan.pixels());
      std::vector<FamilyProfile> prof;
      for (int phase = 0; phase < 2; ++phase) {
        scan.model->phase(model, scan.geometry, scan.grain_orientation[g], phase == 1, img.data());
        features.profile(img.data(), scan.pre.mask(), scan.rays, scan.grain_orientation[g], prof);
        out[g][phase].assign(p, std::nan(""));
        profile_bin_means(prof, bins, out[g][phase].data());
      }
    }
    return out;
  }

  /// Every point's features and its pattern quality (the strongest fundamental band's interior
  /// over its flanks), row by row and resumable.
  void collect(FractionResults& res, LearnedInputs& in, const ProgressFn& progress, RowStore* store) const {
    const ScanGrid& grid = scan.grid;
    const size_t first_fundamental = scan.families.first_fundamental;
    PreprocessedRows rows(*scan.source, grid, data);
    const GrainProfilers at_grain(features, scan.pre.mask(), scan.rays, scan.grain_orientation);
    for_each_scan_row(
        rows, grid, store, "fraction-learned", progress,
        [&](int row, ByteReader& bytes) {
          for (int col = 0; col < grid.cols; ++col) {
            const size_t k = grid.index({row, col});
            res.reason[k] = bytes.get<uint8_t>();
            res.band_contrast[k] = bytes.get<float>();
            for (size_t b = 0; b < p; ++b) in.x[k * p + b] = bytes.get<float>();
          }
        },
        [&](int row, const std::vector<float>& patterns, const std::vector<uint8_t>& usable) {
#pragma omp parallel
          {
            std::vector<FamilyProfile> prof;
#pragma omp for schedule(dynamic)
            for (int col = 0; col < grid.cols; ++col) {
              const size_t k = grid.index({row, col});
              const int g = scan.ori.grains.id[k];
              if (!usable[col]) {
                res.reason[k] = static_cast<uint8_t>(FractionReason::unusable_pattern);
                continue;
              }
              if (!scan.ori.orientation[k] || g <= 0) {
                res.reason[k] = static_cast<uint8_t>(FractionReason::no_orientation);
                continue;
              }
              const float* pattern = patterns.data() + static_cast<size_t>(col) * scan.pixels();
              at_grain.at_grain(g)->profile(pattern, prof);
              profile_bin_means(prof, bins, in.x.data() + k * p);
              const FamilyWindows fw = features.windows(prof[first_fundamental], scan.spec.windows);
              res.band_contrast[k] = static_cast<float>(fw.interior.mean - fw.flanks.mean);
            }
          }
        },
        [&](int row, ByteWriter& bytes) {
          for (int col = 0; col < grid.cols; ++col) {
            const size_t k = grid.index({row, col});
            bytes.put<uint8_t>(res.reason[k]);
            bytes.put<float>(res.band_contrast[k]);
            for (size_t b = 0; b < p; ++b) bytes.put<float>(in.x[k * p + b]);
          }
        });
  }
};

/// The learning's inputs before the features: points, folds for cross-fitting (alternate 4 × 4
/// blocks), features NaN until collected.
LearnedInputs empty_inputs(const FractionScan& scan, size_t p) {
  LearnedInputs in;
  in.points = scan.n, in.features = p, in.grains = scan.grains, in.cols = scan.grid.cols;
  in.reach_rows = scan.reach.rows, in.reach_cols = scan.reach.cols;
  in.grain.assign(scan.n, 0);
  in.fold.assign(scan.n, 0);
  in.x.assign(scan.n * p, std::nanf(""));
  in.first_guess.assign(scan.n, std::nan(""));
  for (size_t k = 0; k < scan.n; ++k) {
    const GridPoint pt = scan.grid.point(k);
    in.fold[k] = static_cast<uint8_t>((pt.row / 4 + pt.col / 4) % 2);
  }
  return in;
}

/// Whether the footprint of point `p` reaches more than one step past the field's edge: its pattern
/// then holds material the map does not show (another grain, the edge of a particle), which no
/// lattice can be taken out for. One step past the edge is the edge point's own neighbour, as
/// likely its grain as the neighbour inside; further out the map says nothing. Only a footprint
/// longer than a step reaches so far: on a 2.9 × footprint along the tilt (reach 3 rows), the first
/// and last two rows (DEVELOPERS, change 18).
bool reaches_past_field_edge(const FractionScan& scan, GridPoint p) {
  const GridReach& reach = scan.reach;
  return p.row < reach.rows - 1 || p.row > scan.grid.rows - reach.rows || p.col < reach.cols - 1 ||
         p.col > scan.grid.cols - reach.cols;
}

/// Boundary points, which are scored but not learned from (a point of another grain among the eight
/// neighbours, or a footprint reaching past the field's edge: reaches_past_field_edge), and each
/// measured point's grain. A grain with too few other points (a sliver at the field's edge) cannot
/// be placed: its mean is too noisy and too mixed with its neighbours' lattices.
void assign_grains(const FractionScan& scan, FractionResults& res, LearnedInputs& in) {
  const size_t n = scan.n;
  const std::vector<int32_t>& id = scan.ori.grains.id;
  in.boundary.assign(n, 0);
  for (size_t k = 0; k < n; ++k) {
    const GridPoint p = scan.grid.point(k);
    in.boundary[k] = reaches_past_field_edge(scan, p);
    for (const GridPoint& nb : scan.grid.neighbours(p, 8))
      in.boundary[k] = in.boundary[k] || id[scan.grid.index(nb)] != id[k];
  }
  for (size_t k = 0; k < n; ++k)
    if (res.reason[k] == static_cast<uint8_t>(FractionReason::ok)) in.grain[k] = id[k];
  std::vector<int> inner_points(scan.grains + 1, 0);
  for (size_t k = 0; k < n; ++k)
    if (in.grain[k] > 0 && !in.boundary[k]) ++inner_points[in.grain[k]];
  for (size_t k = 0; k < n; ++k)
    if (in.grain[k] > 0 && inner_points[in.grain[k]] < scan.spec.learned.min_grain_points)
      in.grain[k] = 0, res.reason[k] = static_cast<uint8_t>(FractionReason::small_grain);
}

/// The features of the grain-boundary points as collected, before any lattice is taken out.
class BoundaryFeatures {
 public:
  explicit BoundaryFeatures(const LearnedInputs& in) {
    const size_t p = in.features;
    for (size_t k = 0; k < in.points; ++k)
      if (in.grain[k] > 0 && in.boundary[k]) saved_.emplace_back(k, std::vector<float>(&in.x[k * p], &in.x[k * p] + p));
  }
  void restore(LearnedInputs& in) const {
    for (const auto& [k, x] : saved_)
      std::copy(x.begin(), x.end(), in.x.begin() + static_cast<std::ptrdiff_t>(k * in.features));
  }

 private:
  std::vector<std::pair<size_t, std::vector<float>>> saved_;
};

/// Per point: the other lattices taken out of its features, (grain id, share).
using OtherLattices = std::vector<std::vector<std::pair<int, double>>>;

/// Each grain's mean pattern needs at least this many usable patterns of points no other lattice
/// reaches; a grain with fewer is seen through the model's pattern.
constexpr int kMinInteriorPatterns = 20;

/// Per grain (index = id): the mean of its linearly preprocessed patterns over a sample of its points
/// that no other grain's lattice reaches (FractionScan::sum_grain_patterns, as the grain frames'
/// mean patterns are read; every process of a shared run reads the same points), empty where fewer
/// than kMinInteriorPatterns are usable.
std::vector<std::vector<float>> interior_mean_patterns(const FractionScan& scan, const LinearFeatures& lin) {
  const GrainPatternSums sums = scan.sum_grain_patterns(lin.data, [&scan](size_t k) {
    return scan.ori.orientation[k].has_value() && scan.grains_within_reach(k).empty();
  });
  std::vector<std::vector<float>> mean(scan.grains + 1);
  for (int g = 1; g <= scan.grains; ++g)
    if (sums.count[g] >= kMinInteriorPatterns) mean[g] = sums.mean(g);
  return mean;
}

/// Per (grain g, other grain h): the change of g's features per unit share of h's lattice. Each
/// other lattice's direction is its grain's measured mean pattern (interior_mean_patterns) profiled
/// in g's frame less g's mean features (`interior`, over its points away from boundaries): the
/// model gives where the other lattice's bands fall in this frame, the data how they look. (The
/// model's disordered pattern in its place left the many-beam variant's matrix points next to
/// boundaries at +0.175 and the area at +0.063: a dynamical band's profile is not the kinematic
/// one.) A grain too small for a mean is seen through the model's pattern, less g's model profile.
using LatticeDirections = std::map<std::pair<int, int>, std::vector<double>>;
LatticeDirections other_lattice_directions(const FractionScan& scan, const LinearFeatures& lin,
                                           const std::vector<std::array<std::vector<double>, 2>>& model_features,
                                           const std::vector<std::vector<float>>& measured,
                                           const GrainFeatures& interior) {
  LatticeDirections out;
  for (const auto& [pair, profiles] : scan.cross_profiles(lin.features, lin.model, measured)) {
    const auto [g, other] = pair;
    const bool data = !measured[other].empty();
    const std::vector<double>& own = data ? interior.mean[g] : model_features[g][0];
    std::vector<double> d(lin.p, std::nan(""));
    for (size_t i = 0; i < lin.p; ++i)
      if (!data || interior.count[g][i] > 0) d[i] = profiles[i / lin.bins][i % lin.bins] - own[i];
    out.emplace(pair, std::move(d));
  }
  return out;
}

/// Where the other lattices are taken out: at the points next to another grain, or at every point
/// the beam's footprint reaches another grain from (the same points where it reaches one step).
enum class TakeOutAt { next_to_boundary, within_reach };

/// Grain boundaries: the shares of the lattices the beam reaches there (FractionScan::
/// grains_within_reach) taken out of the features together along their `directions`, about each
/// grain's mean over its points away from boundaries (`interior`). Where `ordering` (the learned
/// ordered − disordered difference) is given, the shares are fitted beside it.
OtherLattices take_out_other_lattices(const FractionScan& scan, const LatticeDirections& directions,
                                      const GrainFeatures& interior, LearnedInputs& in, TakeOutAt where,
                                      const std::vector<double>& ordering = {}) {
  OtherLattices taken(scan.n);
  for (size_t k = 0; k < scan.n; ++k) {
    const int g = in.grain[k];
    if (g <= 0 || (where == TakeOutAt::next_to_boundary && !in.boundary[k])) continue;
    std::vector<std::vector<double>> reaching;
    std::vector<int> others;
    for (int other : scan.grains_within_reach(k))
      if (const auto it = directions.find({g, other}); it != directions.end())
        others.push_back(other), reaching.push_back(it->second);
    const std::vector<double> share = take_out_other_lattices(in.x.data() + k * in.features, interior.mean[g],
                                                              interior.count[g], std::move(reaching), ordering);
    for (size_t j = 0; j < share.size(); ++j) taken[k].push_back({others[j], share[j]});
  }
  return taken;
}

/// A boundary point's fraction counts the lattices that were taken out of its features: their
/// features were replaced by its own grain's mean, so f read the own grain's mean ordered share for
/// them; each other lattice's share a (clipped to [0, 1]) now counts with its grain's mean fraction
/// instead, f += a (f̄_other − f̄_own), the means over the grains' points away from boundaries. So
/// a primary particle's edge points read the γ′ share of their whole interaction volume, as the
/// points of a two-phase grain's particle edges do.
void count_other_lattices(const OtherLattices& taken, const LearnedInputs& in, FractionResults& res) {
  std::vector<double> sum(in.grains + 1, 0.0), count(in.grains + 1, 0.0);
  for (size_t k = 0; k < res.raw.size(); ++k)
    if (in.grain[k] > 0 && !in.boundary[k] && res.reason[k] == static_cast<uint8_t>(FractionReason::ok))
      sum[in.grain[k]] += res.raw[k], count[in.grain[k]] += 1;
  for (size_t k = 0; k < res.raw.size(); ++k) {
    const int g = in.grain[k];
    if (g <= 0 || taken[k].empty() || res.reason[k] != static_cast<uint8_t>(FractionReason::ok) || !(count[g] > 0))
      continue;
    double change = 0;
    for (const auto& [other, share] : taken[k])
      if (count[other] > 0) change += std::clamp(share, 0.0, 1.0) * (sum[other] / count[other] - sum[g] / count[g]);
    res.raw[k] += static_cast<float>(change);
  }
}

/// The learning's result into the stage's results.
void take_learned(const LearnedFraction& lf, FractionResults& res) {
  for (size_t k = 0; k < res.raw.size(); ++k) {
    if (res.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
    if (std::isnan(lf.f[k])) {
      res.reason[k] = static_cast<uint8_t>(FractionReason::no_band_contrast);
      continue;
    }
    res.raw[k] = lf.f[k];
    res.uncertainty[k] = lf.uncertainty[k];
  }
  res.two_phases = lf.two_phases;
  res.single_phase_ordered = lf.single_phase_ordered;
  res.learned_separation = lf.separation;
  res.learned_evidence = lf.evidence;
  res.learned_spatial_z = lf.spatial_z;
  res.learned_placed_by_patches = lf.placed_by_patches;
  res.learned_iterations = lf.iterations_run;
  res.learned_grain_kind = lf.grain_kind;
  res.learned_named_by = lf.named_by;
  res.learned_named_position = lf.named_position;
  end_members_either_side_of_half(res);
}

}  // namespace

LearnedFamilies estimate_learned(const FractionScan& scan, FractionResults& res, const ProgressFn& progress,
                                 RowStore* store) {
  const LinearFeatures lin(scan, scan.config.preprocess, scan.model->processing_spec());
  const auto model_features = lin.model_features();
  LearnedInputs in = empty_inputs(scan, lin.p);
  lin.collect(res, in, progress, store);
  assign_grains(scan, res, in);
  if (scan.spec.end_members == EndMemberMode::regions) {
    in.reference.assign(scan.n, 0);
    for (size_t k = 0; k < scan.n; ++k) in.reference[k] = scan.spec.in_reference(k, scan.grid.point(k), false);
  }
  const std::vector<std::vector<float>> interior_means = interior_mean_patterns(scan, lin);
  const BoundaryFeatures as_collected(in);
  const GrainFeatures interior = grain_features(in);  // boundary points are not among its points
  const LatticeDirections directions = other_lattice_directions(scan, lin, model_features, interior_means, interior);
  OtherLattices taken = take_out_other_lattices(scan, directions, interior, in, TakeOutAt::next_to_boundary);
  in.model = model_features;
  in.bins = lin.bins;
  in.superlattice_families = scan.families.first_fundamental;
  in.ordering_signature.assign(scan.grains + 1, {});
  for (int g = 1; g <= scan.grains; ++g)
    in.ordering_signature[g] = ordering_signature(lin.features, scan.families, model_features[g]);
  const CommonViewComparison common_view(scan, lin.data, lin.model, lin.features, interior_means,
                                         in.ordering_signature);
  in.position_between = [&common_view](const std::vector<uint8_t>& one_phase, const std::vector<uint8_t>& two_phase,
                                       const std::vector<uint8_t>& cls) {
    return common_view.positions(one_phase, two_phase, cls);
  };
  for (size_t k = 0; k < scan.n; ++k)
    if (in.grain[k] > 0)
      in.first_guess[k] =
          model_first_guess(model_features[in.grain[k]], in.x.data() + k * lin.p, lin.bins, in.superlattice_families);
  LearnedFraction lf = learn_fraction(in, scan.spec.learned);
  // Fitted alone, a boundary point's shares of other lattices take part of its own ordering where
  // both change the features alike (a second lattice weakens the grain's fundamental bands, and so
  // does ordering where γ′'s fundamentals are weaker). Fitted again beside the learned ordering
  // direction, they do not; the learning then runs on the boundary points so cleaned (DEVELOPERS,
  // change 17). Fitted beside it, they are also taken out wherever the footprint reaches another
  // grain, not only next to it: on a footprint 2.9 × longer along the tilt, points two and three
  // rows from a boundary across it see a tenth of the other lattice, which had put single points
  // at f = 5 to 9 and, on most scans of that footprint, the scale on those strays (DEVELOPERS,
  // change 18).
  if (lf.two_phases && lf.difference.size() == lin.p) {
    as_collected.restore(in);
    taken = take_out_other_lattices(scan, directions, interior, in, TakeOutAt::within_reach, lf.difference);
    lf = learn_fraction(in, scan.spec.learned);
  }
  take_learned(lf, res);
  if (lf.two_phases) count_other_lattices(taken, in, res);
  LearnedFamilies out;
  const size_t nf = scan.families.count();
  if (lf.difference.size() == nf * lin.bins)
    for (size_t f = 0; f < nf; ++f)
      out.difference.emplace_back(lf.difference.begin() + f * lin.bins, lf.difference.begin() + (f + 1) * lin.bins);
  for (size_t b = 0; b < lin.bins; ++b) out.u.push_back(lin.features.bin_centre_u(static_cast<int>(b)));
  return out;
}

}  // namespace orderband
