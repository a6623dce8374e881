// The orientation stage of a scan.
#include "orderband/orient.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"
#include "orderband/laue_group.hpp"
#include "orderband/units.hpp"
#include "row_loop.hpp"

namespace orderband {

const char* point_status_name(PointStatus s) {
  switch (s) {
    case PointStatus::ok:
      return "ok";
    case PointStatus::unusable_pattern:
      return "unusable_pattern";
    case PointStatus::too_few_bands:
      return "too_few_bands";
    case PointStatus::fit_failed:
      return "fit_failed";
    case PointStatus::missing_in_file:
      return "missing_in_file";
  }
  return "?";
}

size_t OrientationResults::usable() const {
  return static_cast<size_t>(std::count_if(status.begin(), status.end(), [](uint8_t s) {
    return s != static_cast<uint8_t>(PointStatus::unusable_pattern);
  }));
}

size_t OrientationResults::with_orientation() const {
  return static_cast<size_t>(
      std::count_if(orientation.begin(), orientation.end(), [](const auto& o) { return o.has_value(); }));
}

namespace {

/// What the orientation stage's steps share: the parent phase's model, the band detector, the
/// indexer and the refiner, built once per scan. Not copyable (its parts refer to each other).
struct OrientStage {
  OrientStage(const ScanInputs& in, const OrientSpec& s)
      : inputs(in),
        spec(s),
        grid(in.config.grid),
        source(in.patterns.get()),
        geometry(in.geometry()),
        // γ and γ′ share the lattice (cube-on-cube): index and refine as the disordered parent.
        symmetry(laue_rotations(in.phases.disordered)),
        model(in.phases.disordered, in.config.kv, parent_model_params()),
        indexer(in.phases.disordered, in.config.kv, s.index),
        pre(in.preprocessor()),
        detector(geometry, pre.mask(), s.detect),
        rays(geometry),
        refiner(model, rays, pre.mask(), s.refine),
        threshold(deg_to_rad(s.grains.threshold_deg)) {}
  OrientStage(const OrientStage&) = delete;
  OrientStage& operator=(const OrientStage&) = delete;

  static BandModelParams parent_model_params() {
    BandModelParams p;
    p.d_min_A = 0.9;
    return p;
  }

  const ScanInputs& inputs;
  const OrientSpec& spec;
  const ScanGrid& grid;
  PatternSource* source;
  DetectorGeometry geometry;
  CrystalSymmetry symmetry;
  KinematicBandModel model;
  Indexer indexer;
  const Preprocessor& pre;
  BandDetector detector;
  DetectorRays rays;
  OrientationRefiner refiner;
  double threshold;  ///< grain threshold (rad)

  /// Point k's pattern refined again from `start`; the result is taken if the model then fits the
  /// pattern better by more than `margin`.
  bool retry_from(OrientationResults& r, size_t k, const Rotation& start, double margin,
                  std::vector<float>& pattern) const {
    pattern.resize(source->pixels());
    source->read(k, 1, pattern.data());
    if (!pre.apply(pattern.data())) return false;
    const RefineResult fit = refiner.refine(pattern.data(), start);
    if (!(fit.correlation > r.correlation[k] + margin)) return false;
    r.orientation[k] = symmetry.reduce(fit.orientation);
    r.correlation[k] = static_cast<float>(fit.correlation);
    return true;
  }
};

OrientationResults empty_results(size_t n) {
  OrientationResults r;
  r.orientation.assign(n, std::nullopt);
  r.status.assign(n, 0);
  r.bands_matched.assign(n, -1);
  r.fit_residual_deg.assign(n, std::nanf(""));
  r.correlation.assign(n, std::nanf(""));
  return r;
}

/// A start for a point from the row above: an orientation and the model correlation it had there.
struct NeighbourStart {
  Rotation orientation;
  float correlation = 0;
};

/// The orientations of the points (row − 1, col − 1 … col + 1) that have one, each distinct from
/// those before it (the one straight above first) by more than the grain threshold, best fit first.
std::vector<NeighbourStart> starts_from_row_above(const OrientStage& st, const OrientationResults& r, int row,
                                                  int col) {
  std::vector<NeighbourStart> starts;
  if (row == 0) return starts;
  for (const int c : {col, col - 1, col + 1}) {
    if (c < 0 || c >= st.grid.cols) continue;
    const size_t j = st.grid.index({row - 1, c});
    if (!r.orientation[j]) continue;
    const Rotation& o = *r.orientation[j];
    const bool distinct = std::none_of(starts.begin(), starts.end(), [&](const NeighbourStart& s) {
      return st.symmetry.misorientation_angle(s.orientation, o) <= st.threshold;
    });
    if (distinct) starts.push_back({o, r.correlation[j]});
  }
  // The best fit first: a point on a grain boundary above (a mixed pattern, poorly fitted) must not
  // lend its orientation before a good one.
  std::stable_sort(starts.begin(), starts.end(),
                   [](const NeighbourStart& a, const NeighbourStart& b) { return a.correlation > b.correlation; });
  return starts;
}

/// Point k refined from the row above's orientations (starts_from_row_above): the first converged fit
/// within the margin of its start's own correlation is taken. False: none fits; index the point.
bool orient_from_neighbours(const OrientStage& st, const float* p, size_t k, const std::vector<NeighbourStart>& starts,
                            OrientationResults& r) {
  for (const NeighbourStart& start : starts) {
    const RefineResult fit = st.refiner.refine(p, start.orientation);
    // A fit that has not converged travelled far from its start (another grain's orientation).
    if (!fit.converged || fit.correlation < st.spec.min_correlation ||
        fit.correlation < start.correlation - st.spec.neighbour_margin)
      continue;
    r.orientation[k] = st.symmetry.reduce(fit.orientation);
    r.correlation[k] = static_cast<float>(fit.correlation);
    return true;
  }
  return false;
}

/// One point: its orientation found (the best-voted distinct solutions compete by how well the
/// model matches the pattern) or taken from the given table, then refined.
void orient_point(const OrientStage& st, const float* p, size_t k, OrientationResults& r) {
  const std::optional<OrientationTable>& given = st.inputs.given_orientations;
  std::optional<Rotation> start;
  if (given) {
    start = given->orientations[k];
    if (!start) {
      r.status[k] = static_cast<uint8_t>(PointStatus::missing_in_file);
      return;
    }
  } else {
    const auto found = st.indexer.candidates(st.detector.detect(p), st.spec.candidates);
    if (found.empty()) {
      r.status[k] = static_cast<uint8_t>(PointStatus::too_few_bands);
      return;
    }
    size_t best = 0;
    double best_r = -2;
    for (size_t c = 0; c < found.size(); ++c) {
      const double corr = st.refiner.correlation(p, found[c].orientation, true);
      if (corr > best_r) best_r = corr, best = c;
    }
    start = found[best].orientation;
    r.bands_matched[k] = static_cast<int16_t>(found[best].bands_matched);
    r.fit_residual_deg[k] = static_cast<float>(found[best].fit_residual_deg);
  }
  if (st.inputs.config.orientations.refine) {
    const RefineResult fit = st.refiner.refine(p, *start);
    r.correlation[k] = static_cast<float>(fit.correlation);
    if (fit.correlation < st.spec.min_correlation) {
      r.status[k] = static_cast<uint8_t>(PointStatus::fit_failed);
      return;
    }
    start = st.symmetry.reduce(fit.orientation);
  } else {
    r.correlation[k] = static_cast<float>(st.refiner.correlation(p, *start));
  }
  r.orientation[k] = *start;
}

void restore_row(const ScanGrid& grid, int row, ByteReader& in, OrientationResults& r) {
  for (int col = 0; col < grid.cols; ++col) {
    const size_t k = grid.index({row, col});
    r.status[k] = in.get<uint8_t>();
    if (in.get<uint8_t>()) {
      double q[4];
      for (double& v : q) v = in.get<double>();
      r.orientation[k] = Rotation::from_quaternion(q[0], q[1], q[2], q[3]);
    }
    r.bands_matched[k] = in.get<int16_t>();
    r.fit_residual_deg[k] = in.get<float>();
    r.correlation[k] = in.get<float>();
  }
}

void save_row(const ScanGrid& grid, int row, ByteWriter& out, const OrientationResults& r) {
  for (int col = 0; col < grid.cols; ++col) {
    const size_t k = grid.index({row, col});
    out.put<uint8_t>(r.status[k]);
    out.put<uint8_t>(r.orientation[k] ? 1 : 0);
    if (r.orientation[k])
      for (int i = 0; i < 4; ++i) out.put<double>(r.orientation[k]->quaternion()[i]);
    out.put<int16_t>(r.bands_matched[k]);
    out.put<float>(r.fit_residual_deg[k]);
    out.put<float>(r.correlation[k]);
  }
}

/// Every point of the scan, row by row (rows saved by an interrupted run are restored).
void orient_points(const OrientStage& st, const ProgressFn& progress, RowStore* store, OrientationResults& r) {
  const ScanGrid& grid = st.grid;
  const size_t px = st.source->pixels();
  PreprocessedRows rows(*st.source, grid, st.pre);
  for_each_scan_row(
      rows, grid, store, "orient", progress, [&](int row, ByteReader& in) { restore_row(grid, row, in, r); },
      [&](int row, const std::vector<float>& patterns, const std::vector<uint8_t>& usable) {
        // Only the rows before are read, so the results do not depend on the number of threads.
        const bool from_neighbours =
            st.spec.from_neighbours && !st.inputs.given_orientations && st.inputs.config.orientations.refine;
#pragma omp parallel for schedule(dynamic)
        for (int col = 0; col < grid.cols; ++col) {
          const size_t k = grid.index({row, col});
          const float* p = patterns.data() + static_cast<size_t>(col) * px;
          if (!usable[col])
            r.status[k] = static_cast<uint8_t>(PointStatus::unusable_pattern);
          else if (!from_neighbours || !orient_from_neighbours(st, p, k, starts_from_row_above(st, r, row, col), r))
            orient_point(st, p, k, r);
        }
      },
      [&](int row, ByteWriter& out) { save_row(grid, row, out, r); });
}

/// Neighbour check: a point that disagrees with most of its neighbours while they agree with
/// each other is refined again from their orientation, and takes it if the model then fits its
/// pattern better (an isolated wrong solution of the indexing).
void recheck_isolated_points(const OrientStage& st, OrientationResults& r) {
  const ScanGrid& grid = st.grid;
  std::vector<size_t> suspects;
  for (size_t k = 0; k < grid.count(); ++k) {
    if (!r.orientation[k]) continue;
    int disagree = 0, with = 0;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
      const size_t j = grid.index(nb);
      if (!r.orientation[j]) continue;
      ++with;
      disagree += st.symmetry.misorientation_angle(*r.orientation[k], *r.orientation[j]) > st.threshold;
    }
    if (with >= 3 && disagree * 4 >= with * 3) suspects.push_back(k);
  }
  std::vector<float> pattern;
  for (size_t k : suspects) {
    std::optional<Rotation> consensus;
    int best_votes = 0;
    const auto nbs = grid.neighbours(grid.point(k), 8);
    for (const GridPoint& a : nbs) {
      const size_t ja = grid.index(a);
      if (!r.orientation[ja]) continue;
      int votes = 0;
      for (const GridPoint& b : nbs) {
        const size_t jb = grid.index(b);
        votes += r.orientation[jb] &&
                 st.symmetry.misorientation_angle(*r.orientation[ja], *r.orientation[jb]) < st.threshold;
      }
      if (votes > best_votes) best_votes = votes, consensus = r.orientation[ja];
    }
    if (consensus && best_votes >= 3) st.retry_from(r, k, *consensus, 0.02, pattern);
  }
}

/// A grain's crystal-frame operator S to a clearly better solution, when most of its sampled points
/// find one (else empty).
std::optional<Rotation> pseudo_symmetry_operator(const OrientStage& st, const std::vector<size_t>& pts,
                                                 OrientationResults& r, std::vector<float>& pattern,
                                                 std::optional<Rotation>& reference) {
  const size_t samples = std::min<size_t>(pts.size(), st.spec.pseudo_symmetry_samples);
  if (samples == 0) return std::nullopt;
  int better = 0;
  std::optional<Rotation> op;  // S = g_better · g_current⁻¹, from the sample that gains most
  double best_gain = 0;
  pattern.resize(st.source->pixels());
  for (size_t i = 0; i < samples; ++i) {
    const size_t k = pts[i * pts.size() / samples];
    st.source->read(k, 1, pattern.data());
    if (!st.pre.apply(pattern.data())) continue;
    const auto found = st.indexer.candidates(st.detector.detect(pattern.data()), st.spec.candidates);
    std::vector<std::pair<double, size_t>> ranked;
    for (size_t c = 0; c < found.size(); ++c)
      ranked.emplace_back(st.refiner.correlation(pattern.data(), found[c].orientation, true), c);
    std::sort(ranked.begin(), ranked.end(), std::greater<>());
    for (size_t j = 0; j < ranked.size() && j < static_cast<size_t>(st.spec.pseudo_symmetry_candidates); ++j) {
      const RefineResult fit = st.refiner.refine(pattern.data(), found[ranked[j].second].orientation);
      const double gain = fit.correlation - r.correlation[k];
      if (gain < st.spec.pseudo_symmetry_gain ||
          st.symmetry.misorientation_angle(fit.orientation, *r.orientation[k]) < st.threshold)
        continue;
      ++better;
      if (gain > best_gain)
        best_gain = gain, op = fit.orientation * r.orientation[k]->inverse(), reference = r.orientation[k];
      break;
    }
  }
  if (!op || better * 2 <= static_cast<int>(samples)) return std::nullopt;
  return op;
}

/// Pseudo-symmetric grains: a whole grain can take a solution that fits its patterns well but not
/// best (e.g. 60° about <111> for a body-centred cubic parent), when the true solution came out of
/// the indexing a degree or two off and trailed before refinement. A few points per grain refine
/// their best candidates; if most of them find a clearly better fit elsewhere, the grain is mapped
/// by that crystal-frame operator S and every point is refined from S·g.
void remap_pseudo_symmetric_grains(const OrientStage& st, OrientationResults& r) {
  bool changed = false;
  std::vector<std::vector<size_t>> members(r.grains.count() + 1);
  for (size_t k = 0; k < st.grid.count(); ++k)
    if (r.grains.id[k] > 0) members[r.grains.id[k]].push_back(k);
  std::vector<float> pattern;
  for (int g = 1; g <= r.grains.count(); ++g) {
    std::optional<Rotation> reference;  // the sample's orientation (S holds for its symmetric variant)
    const std::optional<Rotation> op = pseudo_symmetry_operator(st, members[g], r, pattern, reference);
    if (!op) continue;
    r.pseudo_symmetric_grains += 1;
    for (size_t k : members[g]) {
      // S was found for one sample's symmetric variant; bring each point to that variant first.
      if (st.retry_from(r, k, *op * st.symmetry.nearest_equivalent(*r.orientation[k], *reference), 0.0, pattern))
        r.pseudo_symmetric_points += 1, changed = true;
    }
  }
  if (changed) r.grains = segment_grains(st.grid, r.orientation, st.symmetry, st.spec.grains);
}

/// Small clusters merged into a grain keep their own orientation: each point far from its grain's
/// mean is refined from the mean and takes it if the model then fits its pattern better.
void join_points_to_grains(const OrientStage& st, OrientationResults& r) {
  bool changed = false;
  std::vector<float> pattern;
  for (size_t k = 0; k < st.grid.count(); ++k) {
    const int g = r.grains.id[k];
    if (g <= 0 || st.symmetry.misorientation_angle(*r.orientation[k], r.grains.mean[g - 1]) < st.threshold) continue;
    if (st.retry_from(r, k, r.grains.mean[g - 1], 0.02, pattern)) r.points_joined_to_grain += 1, changed = true;
  }
  if (changed) r.grains = segment_grains(st.grid, r.orientation, st.symmetry, st.spec.grains);
}

}  // namespace

OrientationResults orient_scan(const ScanInputs& inputs, const OrientSpec& spec, const ProgressFn& progress,
                               RowStore* store) {
  const OrientStage st(inputs, spec);
  OrientationResults r = empty_results(st.grid.count());
  orient_points(st, progress, store, r);
  if (!inputs.given_orientations)
    for (size_t k = 0; k < r.orientation.size(); ++k)
      r.points_from_neighbours += r.orientation[k] && r.bands_matched[k] < 0;
  recheck_isolated_points(st, r);
  r.grains = segment_grains(st.grid, r.orientation, st.symmetry, spec.grains);
  if (!inputs.given_orientations && inputs.config.orientations.refine && spec.pseudo_symmetry_samples > 0)
    remap_pseudo_symmetric_grains(st, r);
  join_points_to_grains(st, r);
  r.kam_deg = kernel_average_misorientation(st.grid, r.orientation, r.grains, st.symmetry);
  r.pattern_faults = st.source->faults();
  return r;
}

}  // namespace orderband
