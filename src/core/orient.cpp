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

OrientationResults orient_scan(const ScanInputs& inputs, const OrientSpec& spec, const ProgressFn& progress,
                               RowStore* store) {
  const ScanConfig& config = inputs.config;
  const ScanGrid& grid = config.grid;
  PatternSource* source = inputs.patterns.get();
  const DetectorGeometry geometry(inputs.geometry());
  const OrderingPair& pair = inputs.phases;
  // γ and γ′ share the lattice (cube-on-cube): index and refine as the disordered parent.
  const Phase& parent = pair.disordered;
  const CrystalSymmetry symmetry(laue_rotations(parent));
  BandModelParams model_params;
  model_params.d_min_A = 0.9;
  const KinematicBandModel model(parent, config.kv, model_params);
  const Indexer indexer(parent, config.kv, spec.index);
  const std::optional<OrientationTable>& given = inputs.given_orientations;

  const Preprocessor& pre = inputs.preprocessor();
  const BandDetector detector(geometry, pre.mask(), spec.detect);
  const DetectorRays rays(geometry);
  const OrientationRefiner refiner(model, rays, pre.mask(), spec.refine);

  OrientationResults r;
  const size_t n = grid.count();
  r.orientation.assign(n, std::nullopt);
  r.status.assign(n, 0);
  r.bands_matched.assign(n, -1);
  r.fit_residual_deg.assign(n, std::nanf(""));
  r.correlation.assign(n, std::nanf(""));

  const size_t px = source->pixels();
  PreprocessedRows rows(*source, grid, pre);
  for_each_scan_row(
      rows, grid, store, "orient", progress,
      [&](int row, ByteReader& in) {
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
      },
      [&](int row, const std::vector<float>& patterns, const std::vector<uint8_t>& usable) {
#pragma omp parallel for schedule(dynamic)
        for (int col = 0; col < grid.cols; ++col) {
          const size_t k = grid.index({row, col});
          const float* p = patterns.data() + static_cast<size_t>(col) * px;
          if (!usable[col]) {
            r.status[k] = static_cast<uint8_t>(PointStatus::unusable_pattern);
            continue;
          }
          std::optional<Rotation> start;
          if (given) {
            start = given->orientations[k];
            if (!start) {
              r.status[k] = static_cast<uint8_t>(PointStatus::missing_in_file);
              continue;
            }
          } else {
            // The best-voted distinct solutions compete by how well the model matches the pattern.
            const auto found = indexer.candidates(detector.detect(p), spec.candidates);
            if (found.empty()) {
              r.status[k] = static_cast<uint8_t>(PointStatus::too_few_bands);
              continue;
            }
            size_t best = 0;
            double best_r = -2;
            for (size_t c = 0; c < found.size(); ++c) {
              const double corr = refiner.correlation(p, found[c].orientation, true);
              if (corr > best_r) best_r = corr, best = c;
            }
            start = found[best].orientation;
            r.bands_matched[k] = static_cast<int16_t>(found[best].bands_matched);
            r.fit_residual_deg[k] = static_cast<float>(found[best].fit_residual_deg);
          }
          if (config.orientations.refine) {
            const RefineResult fit = refiner.refine(p, *start);
            r.correlation[k] = static_cast<float>(fit.correlation);
            if (fit.correlation < spec.min_correlation) {
              r.status[k] = static_cast<uint8_t>(PointStatus::fit_failed);
              continue;
            }
            start = symmetry.reduce(fit.orientation);
          } else {
            r.correlation[k] = static_cast<float>(refiner.correlation(p, *start));
          }
          r.orientation[k] = *start;
        }
      },
      [&](int row, ByteWriter& out) {
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
      });
  // Neighbour check: a point that disagrees with most of its neighbours while they agree with
  // each other is refined again from their orientation, and takes it if the model then fits
  // its pattern better (an isolated wrong solution of the indexing).
  const double threshold = deg_to_rad(spec.grains.threshold_deg);
  std::vector<size_t> suspects;
  for (size_t k = 0; k < n; ++k) {
    if (!r.orientation[k]) continue;
    const auto nbs = grid.neighbours(grid.point(k), 8);
    int disagree = 0, with = 0;
    for (const GridPoint& nb : nbs) {
      const size_t j = grid.index(nb);
      if (!r.orientation[j]) continue;
      ++with;
      disagree += symmetry.misorientation_angle(*r.orientation[k], *r.orientation[j]) > threshold;
    }
    if (with >= 3 && disagree * 4 >= with * 3) suspects.push_back(k);
  }
  // The second looks below share one step: point k's pattern refined again from `start`, the
  // result taken if the model then fits the pattern better by more than `margin`.
  std::vector<float> pattern(px);
  auto retry_from = [&](size_t k, const Rotation& start, double margin) {
    source->read(k, 1, pattern.data());
    if (!pre.apply(pattern.data())) return false;
    const RefineResult fit = refiner.refine(pattern.data(), start);
    if (!(fit.correlation > r.correlation[k] + margin)) return false;
    r.orientation[k] = symmetry.reduce(fit.orientation);
    r.correlation[k] = static_cast<float>(fit.correlation);
    return true;
  };
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
        votes += r.orientation[jb] && symmetry.misorientation_angle(*r.orientation[ja], *r.orientation[jb]) < threshold;
      }
      if (votes > best_votes) best_votes = votes, consensus = r.orientation[ja];
    }
    if (consensus && best_votes >= 3) retry_from(k, *consensus, 0.02);
  }
  r.grains = segment_grains(grid, r.orientation, symmetry, spec.grains);
  // Pseudo-symmetric grains: a whole grain can take a solution that fits its patterns well but
  // not best (e.g. 60° about <111> for a body-centred cubic parent), when the true solution came
  // out of the indexing a degree or two off and trailed before refinement. A few points per grain
  // refine their best candidates; if most of them find a clearly better fit elsewhere, the grain is
  // mapped by that crystal-frame operator S and every point is refined from S·g.
  if (!given && config.orientations.refine && spec.pseudo_symmetry_samples > 0) {
    bool changed = false;
    std::vector<std::vector<size_t>> members(r.grains.count() + 1);
    for (size_t k = 0; k < n; ++k)
      if (r.grains.id[k] > 0) members[r.grains.id[k]].push_back(k);
    for (int g = 1; g <= r.grains.count(); ++g) {
      const std::vector<size_t>& pts = members[g];
      const size_t samples = std::min<size_t>(pts.size(), spec.pseudo_symmetry_samples);
      if (samples == 0) continue;
      int better = 0;
      std::optional<Rotation> op;         // S = g_better · g_current⁻¹, from the sample that gains most
      std::optional<Rotation> reference;  // that sample's orientation (S holds for its symmetric variant)
      double best_gain = 0;
      for (size_t i = 0; i < samples; ++i) {
        const size_t k = pts[i * pts.size() / samples];
        source->read(k, 1, pattern.data());
        if (!pre.apply(pattern.data())) continue;
        const auto found = indexer.candidates(detector.detect(pattern.data()), spec.candidates);
        std::vector<std::pair<double, size_t>> ranked;
        for (size_t c = 0; c < found.size(); ++c)
          ranked.emplace_back(refiner.correlation(pattern.data(), found[c].orientation, true), c);
        std::sort(ranked.begin(), ranked.end(), std::greater<>());
        for (size_t j = 0; j < ranked.size() && j < static_cast<size_t>(spec.pseudo_symmetry_candidates); ++j) {
          const RefineResult fit = refiner.refine(pattern.data(), found[ranked[j].second].orientation);
          const double gain = fit.correlation - r.correlation[k];
          if (gain < spec.pseudo_symmetry_gain ||
              symmetry.misorientation_angle(fit.orientation, *r.orientation[k]) < threshold)
            continue;
          ++better;
          if (gain > best_gain)
            best_gain = gain, op = fit.orientation * r.orientation[k]->inverse(), reference = r.orientation[k];
          break;
        }
      }
      if (!op || better * 2 <= static_cast<int>(samples)) continue;
      r.pseudo_symmetric_grains += 1;
      for (size_t k : pts) {
        // S was found for one sample's symmetric variant; bring each point to that variant first.
        if (retry_from(k, *op * symmetry.nearest_equivalent(*r.orientation[k], *reference), 0.0))
          r.pseudo_symmetric_points += 1, changed = true;
      }
    }
    if (changed) r.grains = segment_grains(grid, r.orientation, symmetry, spec.grains);
  }
  // Small clusters merged into a grain keep their own orientation: each point far from its grain's
  // mean is refined from the mean and takes it if the model then fits its pattern better.
  {
    bool changed = false;
    for (size_t k = 0; k < n; ++k) {
      const int g = r.grains.id[k];
      if (g <= 0 || symmetry.misorientation_angle(*r.orientation[k], r.grains.mean[g - 1]) < threshold) continue;
      if (retry_from(k, r.grains.mean[g - 1], 0.02)) r.points_joined_to_grain += 1, changed = true;
    }
    if (changed) r.grains = segment_grains(grid, r.orientation, symmetry, spec.grains);
  }
  r.kam_deg = kernel_average_misorientation(grid, r.orientation, r.grains, symmetry);
  r.pattern_faults = source->faults();
  return r;
}

}  // namespace orderband
