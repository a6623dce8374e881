// Particle segmentation and statistics.
#include "orderband/particles.hpp"

#include <Eigen/Dense>

#include <algorithm>
#include <cmath>
#include <deque>
#include <limits>
#include <map>
#include <random>
#include <set>

#include "orderband/distributions.hpp"
#include "orderband/error.hpp"
#include "orderband/grid_regions.hpp"
#include "orderband/particle_split.hpp"
#include "orderband/units.hpp"

namespace orderband {

double otsu_threshold(const std::vector<float>& values) {
  std::vector<double> hist(256, 0.0);
  double total = 0;
  for (float v : values)
    if (std::isfinite(v)) hist[std::clamp(static_cast<int>(v * 255.999), 0, 255)] += 1, total += 1;
  if (total == 0) return 0.5;
  double sum_all = 0;
  for (int k = 0; k < 256; ++k) sum_all += k * hist[k];
  // Between-class variance for every split; a run of equal maxima (an empty stretch of the
  // histogram between the classes) gives its middle.
  std::vector<double> between(255, -1.0);
  double w0 = 0, sum0 = 0, best = -1;
  for (int k = 0; k < 255; ++k) {
    w0 += hist[k], sum0 += k * hist[k];
    const double w1 = total - w0;
    if (w0 == 0 || w1 == 0) continue;
    const double m0 = sum0 / w0, m1 = (sum_all - sum0) / w1;
    between[k] = w0 * w1 * (m0 - m1) * (m0 - m1);
    best = std::max(best, between[k]);
  }
  if (best < 0) return 0.5;
  int first = -1, last = -1;
  for (int k = 0; k < 255; ++k)
    if (between[k] >= best * (1 - 1e-12)) {
      if (first < 0) first = k;
      last = k;
    }
  return (0.5 * (first + last) + 1) / 256.0;
}

std::string SizeClasses::classify(const Particle2D& p) const {
  const double d = p.class_diameter_um > 0 ? p.class_diameter_um : p.section_diameter_um;
  if (d < detection_limit_um) return kUnresolvedClass;
  if (names.size() < 3) return classify(d);
  const double coarse = lower_um.back();
  if (p.own_orientation || (p.on_grain_boundary && d >= boundary_share * coarse) || d >= coarse) return names.back();
  return names[names.size() - 2];
}

std::string SizeClasses::classify(double ecd) const {
  std::string name = names.empty() ? "" : names.front();
  for (size_t k = 0; k < names.size(); ++k)
    if (ecd >= lower_um[k]) name = names[k];
  return name;
}

namespace {

/// Diameter of the circle fitted (Kåsa's algebraic fit, least squares in x² + y² + Dx + Ey + F)
/// to the free boundary of a particle: the midpoints between its points and their outside
/// nearest neighbours inside the map. 0 when the boundary is too short or too straight to define
/// a circle (fewer than 8 samples, or a radius beyond the diagonal of the samples' bounding box).
template <class Outside>
double free_boundary_circle_diameter(const ScanGrid& grid, const std::vector<size_t>& members, Outside&& outside) {
  std::vector<Eigen::Vector2d> samples;
  const int nearest = grid.kind == GridKind::hexagonal ? 6 : 4;
  for (size_t k : members)
    for (const GridPoint& nb : grid.neighbours(grid.point(k), nearest)) {
      const size_t j = grid.index(nb);
      if (outside(j)) samples.push_back(0.5 * (grid.position_um(grid.point(k)) + grid.position_um(nb)));
    }
  if (samples.size() < 8) return 0;
  Eigen::Matrix3d ata = Eigen::Matrix3d::Zero();
  Eigen::Vector3d atb = Eigen::Vector3d::Zero();
  Eigen::Vector2d lo = samples[0], hi = samples[0];
  for (const Eigen::Vector2d& s : samples) {
    const Eigen::Vector3d row(s.x(), s.y(), 1.0);
    ata += row * row.transpose();
    atb -= row * s.squaredNorm();
    lo = lo.cwiseMin(s), hi = hi.cwiseMax(s);
  }
  const Eigen::Vector3d c = ata.ldlt().solve(atb);
  const double r2 = 0.25 * (c[0] * c[0] + c[1] * c[1]) - c[2];
  if (!(r2 > 0)) return 0;
  const double r = std::sqrt(r2);
  return r <= (hi - lo).norm() ? 2 * r : 0.0;
}

/// The points of each particle before the size cut, in scan order of their first points: the
/// connected parts of f ≥ threshold, split where the smoothed map shows two significant maxima
/// (SegmentSpec::split_touching).
std::vector<std::vector<size_t>> particle_parts(const ScanGrid& grid, const std::vector<float>& f,
                                                const Segmentation& seg, const SegmentSpec& spec, int conn) {
  const size_t n = f.size();
  std::vector<uint8_t> inside(n, 0);
  for (size_t k = 0; k < n; ++k) inside[k] = seg.label[k] >= 0 && f[k] >= seg.threshold;
  std::vector<int32_t> label;
  if (spec.split_touching && spec.noise_sd > 0) {
    const double sigma = spec.split_sigma_steps;
    // The spread of independent per-point noise after the Gaussian: σ_f / (2 √π σ).
    const double depth = spec.split_depth_sd * spec.noise_sd / (2 * std::sqrt(kPi) * sigma);
    // Two particles meet across matrix: their saddle dips toward the threshold, while noise on
    // one particle's top leaves saddles near 1; split only below midway between the threshold and 1.
    const double max_saddle = 0.5 * (seg.threshold + 1);
    label = split_by_markers(grid, smooth_map(grid, f, sigma), inside, depth, max_saddle, conn);
    if (std::isfinite(spec.split_shape_depth_steps))
      label = split_by_shape(grid, label, spec.split_shape_depth_steps, conn);
  } else {
    label_regions(
        grid, conn, [&](size_t k) { return inside[k] != 0; }, [](size_t, size_t) { return true; }, label);
  }
  // Collected in scan order of each part's first point.
  std::map<int32_t, size_t> order;
  std::vector<std::vector<size_t>> parts;
  for (size_t k = 0; k < n; ++k) {
    if (label[k] <= 0) continue;
    const auto [it, fresh] = order.try_emplace(label[k], parts.size());
    if (fresh) parts.emplace_back();
    parts[it->second].push_back(k);
  }
  if (spec.split_touching && spec.noise_sd > 0 && std::isfinite(spec.split_elongated_aspect)) {
    const double cell = grid.step_um * grid.row_spacing_um();
    const double max_ecd = std::min(spec.split_elongated_max_ecd_um, 1e6);
    const auto max_points = static_cast<size_t>(std::min(kPi / 4 * max_ecd * max_ecd / cell, 1e9));
    parts = split_elongated(grid, std::move(parts), spec.split_elongated_aspect, spec.min_points, max_points);
  }
  return parts;
}

/// The 3 × 3 (hexagonal: 7-point) mean of f over its finite values, when the spec asks for it.
std::vector<float> smoothed_fraction(const ScanGrid& grid, const std::vector<float>& fraction,
                                     const SegmentSpec& spec) {
  std::vector<float> f = fraction;
  if (!spec.smooth) return f;
  for (size_t k = 0; k < grid.count(); ++k) {
    if (!std::isfinite(fraction[k])) continue;
    double s = fraction[k];
    int c = 1;
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
      const float v = fraction[grid.index(nb)];
      if (std::isfinite(v)) s += v, ++c;
    }
    f[k] = static_cast<float>(s / c);
  }
  return f;
}

/// Second moments about the centroid, aspect ratio and major axis (shape_moments).
void add_shape(const ScanGrid& grid, const std::vector<size_t>& members, Particle2D& p) {
  const ShapeMoments m = shape_moments(grid, members);
  p.mxx_um2 = m.mxx, p.myy_um2 = m.myy, p.mxy_um2 = m.mxy;
  p.aspect_ratio = m.aspect_ratio;
  p.major_axis_deg = rad_to_deg(m.major_axis_rad);
}

/// The particle's host grain (most of its points), whether it holds most of that grain (its own
/// orientation), and whether it touches two or more other grains (on a grain boundary).
void add_grain_context(const ScanGrid& grid, const std::vector<int32_t>& grain, const std::map<int, int>& grain_points,
                       const std::vector<int32_t>& provisional, const std::vector<size_t>& members, Particle2D& p) {
  std::map<int, int> grains;
  for (size_t k : members) grains[grain[k]]++;
  const auto host =
      std::max_element(grains.begin(), grains.end(), [](auto& a, auto& b) { return a.second < b.second; });
  p.host_grain = host->first;
  p.own_orientation = p.host_grain > 0 && 2 * host->second >= grain_points.at(p.host_grain);
  std::set<int> outside;
  for (size_t k : members)
    for (const GridPoint& nb : grid.neighbours(grid.point(k), 8)) {
      const size_t j = grid.index(nb);
      if (provisional[j] != p.id && grain[j] > 0) outside.insert(grain[j]);
    }
  p.on_grain_boundary = outside.size() >= 2;
}

/// One particle from its points: size, centroid, mean fraction, border contact (and then the
/// diameter of the circle its free boundary fits), shape and grain context.
Particle2D measure_particle(const ScanGrid& grid, const std::vector<float>& fraction, const std::vector<int32_t>& grain,
                            const std::map<int, int>& grain_points, const std::vector<int32_t>& provisional,
                            const std::vector<size_t>& members, int id) {
  Particle2D p;
  p.id = id;
  p.points = static_cast<int>(members.size());
  p.area_um2 = p.points * (grid.step_um * grid.row_spacing_um());  // points × one point's cell
  p.ecd_um = 2 * std::sqrt(p.area_um2 / kPi);
  double sx = 0, sy = 0, sf = 0;
  for (size_t k : members) {
    const Eigen::Vector2d pos = grid.position_um(grid.point(k));
    sx += pos.x(), sy += pos.y(), sf += fraction[k];
    const GridPoint q = grid.point(k);
    if (q.row == 0 || q.col == 0 || q.row == grid.rows - 1 || q.col == grid.cols - 1) p.touches_border = true;
  }
  p.centroid_x_um = sx / p.points, p.centroid_y_um = sy / p.points, p.mean_fraction = sf / p.points;
  p.section_diameter_um = p.class_diameter_um = p.ecd_um;
  if (p.touches_border) {
    const double fitted = free_boundary_circle_diameter(grid, members, [&](size_t j) { return provisional[j] != id; });
    if (fitted > p.class_diameter_um) p.class_diameter_um = fitted;
  }
  add_shape(grid, members, p);
  if (!grain.empty()) add_grain_context(grid, grain, grain_points, provisional, members, p);
  return p;
}

}  // namespace

Segmentation segment_particles(const ScanGrid& grid, const std::vector<float>& fraction,
                               const std::vector<int32_t>& grain, const SegmentSpec& spec) {
  grid.validate();
  const size_t n = grid.count();
  if (fraction.size() != n) fail("segmentation: ", fraction.size(), " values for ", n, " points");
  if (spec.square_connectivity != 4 && spec.square_connectivity != 8)
    fail("square-grid connectivity must be 4 or 8, got ", spec.square_connectivity);
  const int conn = grid.kind == GridKind::hexagonal ? 6 : spec.square_connectivity;
  const std::vector<float> f = smoothed_fraction(grid, fraction, spec);
  Segmentation seg;
  seg.threshold = spec.method == ThresholdMethod::otsu ? otsu_threshold(f) : spec.threshold;
  seg.label.assign(n, 0);
  for (size_t k = 0; k < n; ++k) {
    if (!std::isfinite(f[k]))
      seg.label[k] = -1;
    else
      ++seg.usable_points;
  }
  std::map<int, int> grain_points;
  for (int32_t g : grain) grain_points[g]++;
  const std::vector<std::vector<size_t>> parts = particle_parts(grid, f, seg, spec, conn);
  int next = 0;
  std::vector<int32_t> provisional(n, 0);
  for (const std::vector<size_t>& members : parts) {
    if (static_cast<int>(members.size()) < spec.min_points) {
      for (size_t k : members) provisional[k] = -2;  // dropped: matrix
      continue;
    }
    ++next;
    for (size_t k : members) provisional[k] = next;
    seg.particles.push_back(measure_particle(grid, fraction, grain, grain_points, provisional, members, next));
  }
  for (size_t k = 0; k < n; ++k)
    if (seg.label[k] >= 0) seg.label[k] = provisional[k] > 0 ? provisional[k] : 0;
  return seg;
}

std::vector<ClassStats> class_statistics(const ScanGrid& grid, Segmentation& seg, const SizeClasses& classes) {
  if (classes.names.size() != classes.lower_um.size() || classes.names.empty())
    fail("size classes need one lower bound per name");
  for (size_t k = 1; k < classes.lower_um.size(); ++k)
    if (!(classes.lower_um[k] > classes.lower_um[k - 1])) fail("size-class bounds must increase");
  const double analysed = seg.usable_points * grid.step_um * grid.row_spacing_um();
  std::vector<ClassStats> out;
  for (size_t c = 0; c < classes.names.size(); ++c) {
    ClassStats s;
    s.name = classes.names[c];
    s.lower_um = classes.lower_um[c];
    s.upper_um = c + 1 < classes.names.size() ? classes.lower_um[c + 1] : std::numeric_limits<double>::infinity();
    out.push_back(s);
  }
  std::vector<std::vector<double>> ecds(out.size());
  // The classes below the last two hold only ordering below the detection limit, by area.
  for (size_t c = 0; c + 2 < out.size(); ++c) out[c].counted = false;
  for (Particle2D& p : seg.particles) {
    p.size_class = classes.classify(p);
    if (p.size_class == kUnresolvedClass) {
      out.front().area_fraction += p.area_um2 / analysed;
      continue;
    }
    const size_t c = std::find(classes.names.begin(), classes.names.end(), p.size_class) - classes.names.begin();
    out[c].area_fraction += p.area_um2 / analysed;
    if (!p.touches_border) ecds[c].push_back(p.section_diameter_um);
  }
  for (size_t c = 0; c < out.size(); ++c) {
    auto& e = ecds[c];
    ClassStats& s = out[c];
    s.count = static_cast<int>(e.size());
    s.number_density_per_um2 = analysed > 0 ? e.size() / analysed : 0;
    if (e.empty()) continue;
    std::sort(e.begin(), e.end());
    double sum = 0, sl = 0, sl2 = 0;
    for (double d : e) sum += d, sl += std::log(d), sl2 += std::log(d) * std::log(d);
    s.mean_ecd_um = sum / e.size();
    s.median_ecd_um = e.size() % 2 ? e[e.size() / 2] : 0.5 * (e[e.size() / 2 - 1] + e[e.size() / 2]);
    s.lognormal_mu = sl / e.size();
    s.lognormal_sigma = std::sqrt(std::max(0.0, sl2 / e.size() - s.lognormal_mu * s.lognormal_mu));
  }
  return out;
}

FractionCI astm_e562_ci(const std::vector<double>& v) {
  FractionCI ci;
  ci.method = "ASTM E562 point count over fields";
  ci.fields = static_cast<int>(v.size());
  if (v.size() < 2) fail("ASTM E562 needs at least 2 fields");
  double m = 0;
  for (double x : v) m += x;
  m /= v.size();
  double ss = 0;
  for (double x : v) ss += (x - m) * (x - m);
  const double s = std::sqrt(ss / (v.size() - 1));
  ci.mean = m;
  ci.half_width = student_t_quantile(0.975, static_cast<int>(v.size()) - 1) * s / std::sqrt(double(v.size()));
  ci.low = m - ci.half_width, ci.high = m + ci.half_width;
  return ci;
}

FractionCI astm_e562_ci(const ScanGrid& grid, const std::vector<float>& f, int tiles) {
  std::vector<double> sum(tiles * tiles, 0.0), cnt(tiles * tiles, 0.0);
  for (size_t k = 0; k < grid.count(); ++k) {
    if (!std::isfinite(f[k])) continue;
    const GridPoint p = grid.point(k);
    const int t = (p.row * tiles / grid.rows) * tiles + p.col * tiles / grid.cols;
    sum[t] += f[k], cnt[t] += 1;
  }
  std::vector<double> fields;
  for (size_t t = 0; t < sum.size(); ++t)
    if (cnt[t] > 0) fields.push_back(sum[t] / cnt[t]);
  FractionCI ci = astm_e562_ci(fields);
  ci.method = "ASTM E562 over " + std::to_string(fields.size()) + " fields (" + std::to_string(tiles) + " x " +
              std::to_string(tiles) + " tiles of the map)";
  return ci;
}

FractionCI block_bootstrap_ci(const ScanGrid& grid, const std::vector<float>& f, int block, int resamples,
                              uint64_t seed) {
  if (block < 1 || block > std::min(grid.rows, grid.cols)) block = std::max(1, std::min(grid.rows, grid.cols) / 2);
  // Every block position (moving blocks): its sum and count of finite values.
  std::vector<double> bsum, bcnt;
  for (int r = 0; r + block <= grid.rows; ++r)
    for (int c = 0; c + block <= grid.cols; ++c) {
      double s = 0, n = 0;
      for (int i = 0; i < block; ++i)
        for (int j = 0; j < block; ++j) {
          const float v = f[grid.index({r + i, c + j})];
          if (std::isfinite(v)) s += v, n += 1;
        }
      bsum.push_back(s), bcnt.push_back(n);
    }
  const int needed = static_cast<int>(std::ceil(double(grid.rows) * grid.cols / (block * block)));
  std::mt19937_64 rng(seed);
  std::uniform_int_distribution<size_t> pick(0, bsum.size() - 1);
  std::vector<double> means;
  for (int b = 0; b < resamples; ++b) {
    double s = 0, n = 0;
    for (int k = 0; k < needed; ++k) {
      const size_t i = pick(rng);
      s += bsum[i], n += bcnt[i];
    }
    if (n > 0) means.push_back(s / n);
  }
  std::sort(means.begin(), means.end());
  FractionCI ci;
  ci.method = "moving-block bootstrap (" + std::to_string(block) + " x " + std::to_string(block) + " point blocks, " +
              std::to_string(resamples) + " resamples, percentile interval)";
  double s = 0, n = 0;
  for (size_t k = 0; k < f.size(); ++k)
    if (std::isfinite(f[k])) s += f[k], n += 1;
  ci.mean = n > 0 ? s / n : 0;
  ci.low = means[static_cast<size_t>(0.025 * (means.size() - 1))];
  ci.high = means[static_cast<size_t>(0.975 * (means.size() - 1))];
  ci.half_width = 0.5 * (ci.high - ci.low);
  ci.fields = static_cast<int>(bsum.size());
  return ci;
}

Unfolding saltykov_unfold(const std::vector<double>& d, int classes, double area_um2) {
  if (classes < 1) fail("unfolding needs at least one class");
  Unfolding u;
  double dmax = 0;
  for (double x : d) dmax = std::max(dmax, x);
  if (dmax <= 0) return u;
  u.class_width_um = dmax / classes;
  u.section_count.assign(classes, 0.0);
  for (double x : d) {
    const int i = std::clamp(static_cast<int>(std::ceil(x / u.class_width_um)) - 1, 0, classes - 1);
    u.section_count[i] += 1.0 / area_um2;
  }
  for (int j = 1; j <= classes; ++j) u.diameter_um.push_back(j * u.class_width_um);
  auto P = [](int i, int j) {  // 1-based: sphere class j gives a section in class i
    return (std::sqrt(double(j) * j - double(i - 1) * (i - 1)) -
            std::sqrt(std::max(0.0, double(j) * j - double(i) * i))) /
           j;
  };
  u.sphere_count.assign(classes, 0.0);
  for (int i = classes; i >= 1; --i) {
    double rest = u.section_count[i - 1];
    for (int j = i + 1; j <= classes; ++j) rest -= u.sphere_count[j - 1] * u.diameter_um[j - 1] * P(i, j);
    u.sphere_count[i - 1] = rest / (u.diameter_um[i - 1] * P(i, i));
  }
  double num = 0, den = 0;
  for (int j = 0; j < classes; ++j) {
    if (u.sphere_count[j] < 0) {
      ++u.negative_classes;
      continue;
    }
    num += u.sphere_count[j] * (j + 0.5) * u.class_width_um;
    den += u.sphere_count[j];
  }
  u.mean_diameter_um = den > 0 ? num / den : 0;
  return u;
}

}  // namespace orderband
