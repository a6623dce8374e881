// The fraction stage's end members and summaries (fraction_summaries.hpp).
#include "fraction_summaries.hpp"

#include <algorithm>
#include <cmath>
#include <map>

#include "orderband/error.hpp"

namespace orderband {

bool FractionSpec::in_reference(size_t k, GridPoint p, bool ordered) const {
  const std::vector<uint8_t>& mask = ordered ? ordered_mask : disordered_mask;
  if (k < mask.size() && mask[k]) return true;
  for (const PointRect& rect : ordered ? ordered_regions : disordered_regions)
    if (rect.contains(p)) return true;
  return false;
}

namespace {

/// Region points a grain needs for its zero to be the region's own mean.
constexpr double kMinRegionPoints = 20;

/// Whether point k is matrix away from particles and grain boundaries: measured, with its eight
/// neighbours all measured, below one half and of its own grain. Its own value does not take part
/// in the choice, which would cut off its upper noise tail (with a per-point spread of 0.28, as at
/// 5,000 counts on 60 × 60 px, that biases the mean by −0.035). At a grain boundary the beam sees
/// a second lattice, whose share is fitted out of the point's profiles along a direction that can
/// lie close to the ordering direction (where ordering weakens the fundamental bands, so does a
/// second lattice): γ′ fundamentals × 0.8 on the mismatch suite read its matrix's sub-resolution
/// fraction +0.036 with boundary points, +0.000 without (DEVELOPERS, change 16).
bool matrix_away_from_particles(const FractionResults& r, const ScanGrid& grid, const GrainMap& grains, size_t k) {
  if (r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) return false;
  for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
    const size_t j = grid.index(nb);
    if (r.reason[j] != static_cast<uint8_t>(FractionReason::ok) || r.raw[j] >= 0.5 || grains.id[j] != grains.id[k])
      return false;
  }
  return true;
}

/// The learned estimator's zero from a disordered reference region alone (its ordered end member
/// stays the particles, at 1). Its zeros are per grain, each grain's matrix, so the region sets
/// the zero of every grain it lies in by that grain's own region points; the other grains move by
/// the tertiary share t the region showed below the matrix, t = −(region mean), pooled over the
/// grains holding both region and matrix points, each weighted by the harmonic mean of the two
/// counts (a grain lying almost wholly in the region has its zero from the region's points around
/// it and would pull t toward 0; on a scan with one such grain, one global offset had put the
/// sub-resolution fraction at −0.06 for a truth of 0.05). Returns per grain (index 0: points of no
/// grain) the zero z_g; the scale is 1/(1 − z_g).
std::vector<double> learned_zero_from_region(FractionResults& r, const FractionSpec& spec, const ScanGrid& grid,
                                             const GrainMap& grains) {
  const size_t n = r.raw.size();
  const int count = grains.count();
  std::vector<double> region_sum(count + 1, 0.0), region_n(count + 1, 0.0), matrix_n(count + 1, 0.0);
  double all_sum = 0, all_n = 0;
  for (size_t k = 0; k < n; ++k) {
    const int g = grains.id[k];
    if (g <= 0 || r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
    if (spec.in_reference(k, grid.point(k), false))
      region_sum[g] += r.raw[k], region_n[g] += 1, all_sum += r.raw[k], all_n += 1;
    else if (matrix_away_from_particles(r, grid, grains, k))
      matrix_n[g] += 1;
  }
  if (!(all_n > 0)) fail("fraction: the disordered reference region holds no measured point");
  double t_sum = 0, t_weight = 0;
  for (int g = 1; g <= count; ++g)
    if (region_n[g] > 0 && matrix_n[g] > 0) {
      const double w = 2 * region_n[g] * matrix_n[g] / (region_n[g] + matrix_n[g]);
      t_sum += -w * region_sum[g] / region_n[g], t_weight += w;
    }
  const double t = t_weight > 0 ? t_sum / t_weight : -all_sum / all_n;
  std::vector<double> zero(count + 1, -t);
  for (int g = 1; g <= count; ++g)
    if (region_n[g] >= kMinRegionPoints) zero[g] = region_sum[g] / region_n[g];
  r.calibration_offset = -t, r.calibration_scale = 1.0 / (1.0 + t);
  return zero;
}

}  // namespace

void calibrate_end_members(FractionResults& r, const FractionSpec& spec, const ScanGrid& grid, const GrainMap& grains,
                           bool learned) {
  const size_t n = r.raw.size();
  // End members from the scan: a two-component mixture of the raw estimates.
  std::vector<double> values;
  for (size_t k = 0; k < n; ++k)
    if (r.reason[k] == static_cast<uint8_t>(FractionReason::ok)) values.push_back(r.raw[k]);
  const auto mix = two_component_mixture(values);
  if (!learned) r.disordered = mix[0], r.ordered = mix[1];
  std::vector<double> zero;  // per grain, where the zeros are set grain by grain
  if (spec.end_members == EndMemberMode::mixture && !learned) {
    if (mix[1].mean - mix[0].mean < 0.3 || mix[0].weight < 0.02 || mix[1].weight < 0.02)
      fail("fraction: the scan does not show two separated phases (mixture means ", mix[0].mean, " and ", mix[1].mean,
           "); use the model end members or reference regions");
    r.calibration_offset = mix[0].mean;
    r.calibration_scale = 1.0 / (mix[1].mean - mix[0].mean);
  } else if (spec.end_members == EndMemberMode::regions) {
    for (const std::vector<uint8_t>* mask : {&spec.ordered_mask, &spec.disordered_mask})
      if (!mask->empty() && mask->size() != n)
        fail("fraction: a reference mask has ", mask->size(), " points, the scan ", n);
    const bool ordered_given = !spec.ordered_mask.empty() || !spec.ordered_regions.empty();
    if (learned && !ordered_given) {
      zero = learned_zero_from_region(r, spec, grid, grains);
    } else {
      if (!ordered_given)
        fail("fraction: the model-led estimator needs an ordered reference region as well as a disordered one");
      double m[2] = {0, 0};
      int cnt[2] = {0, 0};
      for (size_t k = 0; k < n; ++k) {
        if (r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
        for (int phase = 0; phase < 2; ++phase)
          if (spec.in_reference(k, grid.point(k), phase == 1)) m[phase] += r.raw[k], cnt[phase] += 1;
      }
      if (!cnt[0] || !cnt[1]) fail("fraction: reference regions hold no measured point of one phase");
      m[0] /= cnt[0], m[1] /= cnt[1];
      if (!(m[1] > m[0])) fail("fraction: the ordered reference region is not above the disordered one");
      r.calibration_offset = m[0];
      r.calibration_scale = 1.0 / (m[1] - m[0]);
    }
  }
  // Every measured point rescaled: by its grain's zero (scale 1/(1 − zero)) where the zeros are per
  // grain, else by the one offset and scale.
  for (size_t k = 0; k < n; ++k) {
    if (r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
    const int g = std::max(grains.id[k], 0);
    const double offset = zero.empty() ? r.calibration_offset : zero[g];
    const double scale = zero.empty() ? r.calibration_scale : 1.0 / (1.0 - zero[g]);
    r.raw[k] = static_cast<float>((r.raw[k] - offset) * scale);
    r.uncertainty[k] = static_cast<float>(r.uncertainty[k] * scale);
    r.fraction[k] = std::clamp(r.raw[k], 0.0f, 1.0f);
  }
}

void summarise_grains_and_matrix(FractionResults& r, const FractionSpec& spec, const ScanGrid& grid,
                                 const GrainMap& grains) {
  const size_t n = r.raw.size();
  const int count = grains.count();
  // Per grain: every measured point, and the matrix points away from particles (below).
  r.grains.assign(count, GrainFraction{});
  std::vector<double> grain_sum(count + 1, 0.0), matrix_sum(count + 1, 0.0), matrix_sq(count + 1, 0.0);
  for (size_t k = 0; k < n; ++k) {
    const int g = grains.id[k];
    if (g <= 0 || r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
    r.grains[g - 1].points += 1, grain_sum[g] += r.raw[k];
  }
  // Sub-resolution ordering in the matrix away from resolved particles (matrix_away_from_particles).
  {
    std::map<std::pair<int, int>, std::pair<double, int>> blocks;
    double sum = 0;
    size_t matrix_count = 0;
    for (size_t k = 0; k < n; ++k) {
      if (r.reason[k] != static_cast<uint8_t>(FractionReason::ok)) continue;
      // A disordered reference region is the zero, not the specimen's matrix.
      if (!matrix_away_from_particles(r, grid, grains, k) ||
          (spec.end_members == EndMemberMode::regions && spec.in_reference(k, grid.point(k), false)))
        continue;
      sum += r.raw[k], ++matrix_count;
      if (const int g = grains.id[k]; g > 0)
        r.grains[g - 1].matrix_points += 1, matrix_sum[g] += r.raw[k], matrix_sq[g] += double(r.raw[k]) * r.raw[k];
      const GridPoint p = grid.point(k);
      auto& b = blocks[{p.row / 4, p.col / 4}];
      b.first += r.raw[k], b.second += 1;
    }
    r.subresolution_points = matrix_count;
    if (matrix_count) {
      r.subresolution_fraction = sum / matrix_count;
      // Block means weighted by their point counts: SE of the weighted mean.
      double ss = 0;
      for (const auto& [key, b] : blocks) {
        const double m = b.first / b.second;
        ss += b.second * b.second * (m - r.subresolution_fraction) * (m - r.subresolution_fraction);
      }
      const double nb = static_cast<double>(blocks.size());
      r.subresolution_se =
          nb > 1 ? std::sqrt(ss / (matrix_count * double(matrix_count)) * nb / (nb - 1)) : std::nan("");
    }
  }

  for (int g = 1; g <= count; ++g) {
    GrainFraction& s = r.grains[g - 1];
    if (static_cast<size_t>(g) < r.learned_grain_kind.size())
      s.kind = r.learned_grain_kind[g], s.named_by = r.learned_named_by[g],
      s.named_position = r.learned_named_position[g];
    if (s.points) s.mean = grain_sum[g] / s.points;
    if (s.matrix_points) {
      s.matrix_mean = matrix_sum[g] / s.matrix_points;
      s.matrix_sd = std::sqrt(std::max(0.0, matrix_sq[g] / s.matrix_points - s.matrix_mean * s.matrix_mean));
    }
  }
}

}  // namespace orderband

namespace orderband {

std::vector<FamilyDiagnostic> family_diagnostics(const FractionScan& scan, const std::vector<FractionReference>& refs,
                                                 const FamilySeparation& separation, const LearnedFamilies& learned) {
  const size_t nf = scan.families.count(), first_fundamental = scan.families.first_fundamental;
  const std::vector<int>& size = scan.ori.grains.size;
  std::vector<double> share(nf, 0.0), lo(nf, 0.0), hi(nf, 0.0);
  double total_points = 0;
  for (int g = 1; g <= scan.grains; ++g) {
    const double wgt = size[g - 1];
    total_points += wgt;
    for (size_t f = 0; f < first_fundamental; ++f) {
      share[f] +=
          wgt * (refs[g].denominator > 0 ? refs[g].a[f] * (refs[g].r1[f] - refs[g].r0[f]) / refs[g].denominator : 0);
      lo[f] += wgt * refs[g].r0[f], hi[f] += wgt * refs[g].r1[f];
    }
  }
  int largest = 0, largest_size = -1;
  for (int g = 1; g <= scan.grains; ++g)
    if (size[g - 1] > largest_size) largest_size = size[g - 1], largest = g;
  const BandProfiler& profiler = scan.profiler;
  std::vector<FamilyDiagnostic> out;
  for (size_t f = 0; f < nf; ++f) {
    FamilyDiagnostic d;
    d.label = scan.families.chosen[f].family.label();
    d.superlattice = f < first_fundamental;
    d.sensitivity = scan.families.chosen[f].sensitivity;
    if (total_points > 0)
      d.weight = share[f] / total_points, d.disordered_level = lo[f] / total_points,
      d.ordered_level = hi[f] / total_points;
    d.separation = separation.den[f] > 0 ? separation.num[f] / separation.den[f] : 0.0;
    for (int b = 0; b < profiler.bins(); ++b) d.profile_u.push_back(profiler.bin_centre_u(b));
    if (largest > 0) {
      for (int b = 0; b < profiler.bins(); ++b) {
        d.profile_disordered.push_back(refs[largest].profile0[f].mean(b));
        d.profile_ordered.push_back(refs[largest].profile1[f].mean(b));
      }
    }
    if (f < learned.difference.size()) {
      d.learned_u = learned.u;
      d.learned_difference = learned.difference[f];
    }
    out.push_back(std::move(d));
  }
  return out;
}

}  // namespace orderband
