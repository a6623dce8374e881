// Band profiles with a cube-map candidate table.
#include "orderband/band_profile.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/electron.hpp"
#include "orderband/error.hpp"

namespace orderband {

void FamilyProfile::clear() {
  std::fill(sum.begin(), sum.end(), 0.0);
  std::fill(sum_sq.begin(), sum_sq.end(), 0.0);
  std::fill(weight.begin(), weight.end(), 0.0);
  std::fill(weight_sq.begin(), weight_sq.end(), 0.0);
  std::fill(count.begin(), count.end(), 0);
}

std::vector<ProfileFamily> profile_families(const std::vector<PlaneFamily>& families, double wavelength_A) {
  std::vector<ProfileFamily> out;
  for (const PlaneFamily& f : families) {
    ProfileFamily p;
    p.label = f.label();
    p.theta_b = bragg_angle_rad(f.d_A, wavelength_A);
    for (const CrystalDirection& n : f.normals) p.normals.push_back(n.vec());
    out.push_back(std::move(p));
  }
  return out;
}

int BandProfiler::cell_of(const Eigen::Vector3d& u) const {
  const double ax = std::abs(u.x()), ay = std::abs(u.y()), az = std::abs(u.z());
  int face;
  double a, b, m;
  if (ax >= ay && ax >= az)
    face = u.x() > 0 ? 0 : 1, m = ax, a = u.y(), b = u.z();
  else if (ay >= az)
    face = u.y() > 0 ? 2 : 3, m = ay, a = u.z(), b = u.x();
  else
    face = u.z() > 0 ? 4 : 5, m = az, a = u.x(), b = u.y();
  const int i = std::min(cells_ - 1, static_cast<int>((a / m + 1) * 0.5 * cells_));
  const int j = std::min(cells_ - 1, static_cast<int>((b / m + 1) * 0.5 * cells_));
  return (face * cells_ + i) * cells_ + j;
}

BandProfiler::BandProfiler(std::vector<ProfileFamily> families, const ProfileSpec& spec, int cells)
    : families_(std::move(families)), spec_(spec), cells_(cells) {
  if (!(spec.u_max > 0 && spec.bin_u > 0)) fail("profile range and bin width must be positive");
  if (cells < 4) fail("profile cube map needs at least 4 cells per face");
  bins_ = static_cast<int>(std::lround((spec.folded ? 1 : 2) * spec.u_max / spec.bin_u));
  for (size_t f = 0; f < families_.size(); ++f) {
    if (!(families_[f].theta_b > 0)) fail("family ", families_[f].label, " has no Bragg angle");
    for (const Eigen::Vector3d& n : families_[f].normals) {
      const Eigen::Vector3d u = n.normalized();
      nx_.push_back(static_cast<float>(u.x())), ny_.push_back(static_cast<float>(u.y())),
          nz_.push_back(static_cast<float>(u.z()));
      inv_theta_.push_back(static_cast<float>(1.0 / families_[f].theta_b));
      plane_family_.push_back(static_cast<int>(f));
    }
  }
  if (nx_.size() > 65535) fail("too many planes for the profiler (", nx_.size(), ")");
  // Candidate planes per cell: strips within the cell's angular radius of its centre.
  const int total = 6 * cells_ * cells_;
  offsets_.assign(total + 1, 0);
  std::vector<std::vector<uint16_t>> lists(total);
  for (int face = 0; face < 6; ++face)
    for (int i = 0; i < cells_; ++i)
      for (int j = 0; j < cells_; ++j) {
        auto dir = [&](double a, double b) {
          Eigen::Vector3d v;
          switch (face) {
            case 0:
              v = {1, a, b};
              break;
            case 1:
              v = {-1, a, b};
              break;
            case 2:
              v = {b, 1, a};
              break;
            case 3:
              v = {b, -1, a};
              break;
            case 4:
              v = {a, b, 1};
              break;
            default:
              v = {a, b, -1};
              break;
          }
          return v.normalized();
        };
        const double a0 = 2.0 * i / cells_ - 1, a1 = 2.0 * (i + 1) / cells_ - 1;
        const double b0 = 2.0 * j / cells_ - 1, b1 = 2.0 * (j + 1) / cells_ - 1;
        const Eigen::Vector3d c = dir(0.5 * (a0 + a1), 0.5 * (b0 + b1));
        double radius = 0;
        for (const auto& corner : {dir(a0, b0), dir(a0, b1), dir(a1, b0), dir(a1, b1)})
          radius = std::max(radius, std::acos(std::clamp(corner.dot(c), -1.0, 1.0)));
        const int cell = (face * cells_ + i) * cells_ + j;
        for (size_t k = 0; k < nx_.size(); ++k) {
          const double reach = spec_.u_max / inv_theta_[k] + radius + 1e-6;
          const double alpha = std::asin(std::clamp(nx_[k] * c.x() + ny_[k] * c.y() + nz_[k] * c.z(), -1.0, 1.0));
          if (std::abs(alpha) <= reach) lists[cell].push_back(static_cast<uint16_t>(k));
        }
      }
  for (int c = 0; c < total; ++c) offsets_[c + 1] = offsets_[c] + static_cast<uint32_t>(lists[c].size());
  candidates_.reserve(offsets_.back());
  for (const auto& l : lists) candidates_.insert(candidates_.end(), l.begin(), l.end());
}

template <typename Hit>
void BandProfiler::for_each_strip_pixel(const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
                                        Hit&& hit) const {
  // Single precision for the geometry (errors ~1e-7 rad against bins of ~1e-3 rad).
  const Eigen::Matrix3f m = g.matrix().cast<float>();
  const float scale = static_cast<float>(1.0 / spec_.bin_u);
  const float offset = spec_.folded ? 0.0f : static_cast<float>(spec_.u_max / spec_.bin_u);
  const bool folded = spec_.folded;
  const float half_cells = 0.5f * cells_;
  const int last = cells_ - 1;
  for (size_t q = 0; q < rays.direction.size(); ++q) {
    if (!mask.empty() && !mask[q]) continue;
    const Eigen::Vector3f c = m * rays.direction[q].cast<float>();
    // Cube-map cell (as cell_of, with one division).
    const float ax = std::abs(c.x()), ay = std::abs(c.y()), az = std::abs(c.z());
    int face;
    float a, b, mx;
    if (ax >= ay && ax >= az)
      face = c.x() > 0 ? 0 : 1, mx = ax, a = c.y(), b = c.z();
    else if (ay >= az)
      face = c.y() > 0 ? 2 : 3, mx = ay, a = c.z(), b = c.x();
    else
      face = c.z() > 0 ? 4 : 5, mx = az, a = c.x(), b = c.y();
    const float inv = half_cells / mx;
    const int ci = std::min(last, static_cast<int>(a * inv + half_cells));
    const int cj = std::min(last, static_cast<int>(b * inv + half_cells));
    const int cell = (face * cells_ + ci) * cells_ + cj;
    for (uint32_t e = offsets_[cell]; e < offsets_[cell + 1]; ++e) {
      const uint16_t k = candidates_[e];
      const float x = nx_[k] * c.x() + ny_[k] * c.y() + nz_[k] * c.z();
      // |x| ≤ sin(u_max θ_B) ≲ 0.1 here: asin x = x + x³/6 + O(x⁵) (error < 1e-6 rad).
      const float u = (x + x * x * x * (1.0f / 6)) * inv_theta_[k] * scale;
      const float bf = (folded ? std::abs(u) : u) + offset;
      if (!(bf >= 0 && bf < bins_)) continue;
      hit(q, static_cast<size_t>(plane_family_[k]) * bins_ + static_cast<int>(bf));
    }
  }
}

void BandProfiler::profile(const float* pattern, const std::vector<uint8_t>& mask, const DetectorRays& rays,
                           const Rotation& g, std::vector<FamilyProfile>& out) const {
  // Accumulate into one contiguous block per (family, bin) slot in double, then copy out.
  thread_local std::vector<ProfileSums> acc;
  acc.assign(families_.size() * bins_, ProfileSums{});
  for_each_strip_pixel(mask, rays, g, [&](size_t q, size_t slot) {
    const double v = pattern[q], w = rays.solid_angle[q], wv = w * v;
    ProfileSums& a = acc[slot];
    a.sum += wv, a.sum_sq += wv * v, a.weight += w, a.weight_sq += w * w, a.count += 1;
  });
  copy_out(acc, out);
}

void BandProfiler::profile_weighted(const float* pattern, const std::vector<double>& pixel_weight,
                                    const DetectorRays& rays, const Rotation& g,
                                    std::vector<FamilyProfile>& out) const {
  thread_local std::vector<ProfileSums> acc;
  acc.assign(families_.size() * bins_, ProfileSums{});
  for_each_strip_pixel({}, rays, g, [&](size_t q, size_t slot) {
    const double w = rays.solid_angle[q] * pixel_weight[q];
    if (!(w > 0)) return;
    const double v = pattern[q], wv = w * v;
    ProfileSums& a = acc[slot];
    a.sum += wv, a.sum_sq += wv * v, a.weight += w, a.weight_sq += w * w, a.count += 1;
  });
  copy_out(acc, out);
}

void BandProfiler::copy_out(const std::vector<ProfileSums>& acc, std::vector<FamilyProfile>& out) const {
  out.resize(families_.size());
  for (size_t f = 0; f < families_.size(); ++f) {
    FamilyProfile& p = out[f];
    p.sum.resize(bins_), p.sum_sq.resize(bins_), p.weight.resize(bins_), p.weight_sq.resize(bins_),
        p.count.resize(bins_);
    for (int b = 0; b < bins_; ++b) {
      const ProfileSums& a = acc[f * bins_ + b];
      p.sum[b] = a.sum, p.sum_sq[b] = a.sum_sq, p.weight[b] = a.weight, p.weight_sq[b] = a.weight_sq,
      p.count[b] = a.count;
    }
  }
}

FixedOrientationProfiler BandProfiler::at_orientation(const std::vector<uint8_t>& mask, const DetectorRays& rays,
                                                      const Rotation& g) const {
  FixedOrientationProfiler plan;
  plan.profiler_ = this;
  const size_t slots = families_.size() * bins_;
  plan.fixed_.assign(slots, ProfileSums{});
  // Count the pixels per slot, then list them slot by slot in increasing pixel order (the order in
  // which profile() visits them; the sums differ from its only by the plan's four chains).
  std::vector<uint32_t> per_slot(slots, 0);
  for_each_strip_pixel(mask, rays, g, [&](size_t, size_t slot) { ++per_slot[slot]; });
  plan.offsets_.assign(slots + 1, 0);
  for (size_t s = 0; s < slots; ++s) plan.offsets_[s + 1] = plan.offsets_[s] + per_slot[s];
  plan.pixel_.resize(plan.offsets_.back());
  plan.solid_angle_.assign(rays.solid_angle.begin(), rays.solid_angle.end());
  std::vector<uint32_t> next(plan.offsets_.begin(), plan.offsets_.end() - 1);
  for_each_strip_pixel(mask, rays, g, [&](size_t q, size_t slot) {
    const double w = rays.solid_angle[q];
    plan.pixel_[next[slot]] = static_cast<uint32_t>(q), ++next[slot];
    ProfileSums& a = plan.fixed_[slot];
    a.weight += w, a.weight_sq += w * w, a.count += 1;
  });
  return plan;
}

void FixedOrientationProfiler::profile(const float* pattern, std::vector<FamilyProfile>& out) const {
  thread_local std::vector<ProfileSums> acc;
  thread_local std::vector<double> terms;  // per pixel: w·v and w·v², side by side
  acc = fixed_;
  terms.resize(2 * solid_angle_.size());
  for (size_t q = 0; q < solid_angle_.size(); ++q) {
    const double v = pattern[q], wv = solid_angle_[q] * v;
    terms[2 * q] = wv, terms[2 * q + 1] = wv * v;
  }
  // Four partial sums per slot: the additions of one chain wait on each other, four chains keep the
  // core's adders busy (the sums differ from one chain's in the last bits).
  const double* t = terms.data();
  for (size_t s = 0; s + 1 < offsets_.size(); ++s) {
    double sum[4] = {0, 0, 0, 0}, sum_sq[4] = {0, 0, 0, 0};
    uint32_t e = offsets_[s];
    const uint32_t end = offsets_[s + 1];
    for (; e + 4 <= end; e += 4)
      for (int c = 0; c < 4; ++c) {
        const double* pair = t + 2 * static_cast<size_t>(pixel_[e + c]);
        sum[c] += pair[0], sum_sq[c] += pair[1];
      }
    for (; e < end; ++e) {
      const double* pair = t + 2 * static_cast<size_t>(pixel_[e]);
      sum[0] += pair[0], sum_sq[0] += pair[1];
    }
    acc[s].sum = (sum[0] + sum[1]) + (sum[2] + sum[3]);
    acc[s].sum_sq = (sum_sq[0] + sum_sq[1]) + (sum_sq[2] + sum_sq[3]);
  }
  profiler_->copy_out(acc, out);
}

FamilyWindows BandProfiler::windows(const FamilyProfile& p, const WindowSpec& spec) const {
  FamilyWindows out;
  WindowStats* targets[2] = {&out.interior, &out.flanks};
  double sq[2] = {0, 0}, wsq[2] = {0, 0};
  for (int k = 0; k < bins_; ++k) {
    const double lo = std::abs(bin_centre_u(k)) - 0.5 * spec_.bin_u, hi = lo + spec_.bin_u;
    int which = -1;
    if (hi <= spec.interior_max + 1e-9)
      which = 0;
    else if (lo >= spec.flank_min - 1e-9 && hi <= spec.flank_max + 1e-9)
      which = 1;
    if (which < 0) continue;
    WindowStats& t = *targets[which];
    t.sum += p.sum[k], t.weight += p.weight[k], t.count += p.count[k];
    sq[which] += p.sum_sq[k], wsq[which] += p.weight_sq[k];
  }
  for (int w = 0; w < 2; ++w) {
    WindowStats& t = *targets[w];
    if (t.weight <= 0) continue;
    t.mean = t.sum / t.weight;
    const double scatter = std::max(0.0, sq[w] / t.weight - t.mean * t.mean);
    const double n_eff = t.weight * t.weight / std::max(wsq[w], 1e-300);
    t.variance_of_mean = scatter / n_eff;
  }
  return out;
}

}  // namespace orderband
