// HEALPix sphere, back-projection, symmetry folding and stereographic images.
#include "orderband/sphere.hpp"

#include <healpix_cxx/healpix_base.h>

#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

struct SphereGrid::Impl {
  Healpix_Base base;
};

SphereGrid::SphereGrid(int nside) : impl_(std::make_unique<Impl>()), nside_(nside) {
  if (nside < 1 || nside > 8192 || (nside & (nside - 1)))
    fail("HEALPix nside must be a power of two between 1 and 8192, got ", nside);
  try {
    impl_->base.SetNside(nside, RING);
  } catch (const PlanckError& e) {
    fail("HEALPix: ", e.what());
  }
}

SphereGrid::~SphereGrid() = default;
SphereGrid::SphereGrid(const SphereGrid& other) : SphereGrid(other.nside_) {}

double SphereGrid::pixel_area_sr() const { return 4 * kPi / npix(); }
double SphereGrid::resolution_rad() const { return std::sqrt(4 * kPi / npix()); }

long SphereGrid::pixel_of(const Eigen::Vector3d& u) const { return impl_->base.vec2pix(vec3(u.x(), u.y(), u.z())); }

Eigen::Vector3d SphereGrid::centre_of(long pixel) const {
  const vec3 v = impl_->base.pix2vec(static_cast<int>(pixel));
  return {v.x, v.y, v.z};
}

void SphereGrid::interpolation(const Eigen::Vector3d& u, long pixel[4], double weight[4]) const {
  fix_arr<int, 4> pix;
  fix_arr<double, 4> wgt;
  impl_->base.get_interpol(pointing(vec3(u.x(), u.y(), u.z())), pix, wgt);
  for (int i = 0; i < 4; ++i) pixel[i] = pix[i], weight[i] = wgt[i];
}

int SphereGrid::nside_for(double target_rad) {
  if (!(target_rad > 0)) fail("sphere resolution must be positive");
  int nside = 1;
  while (nside < 8192 && std::sqrt(4 * kPi / (12.0 * nside * nside)) > target_rad) nside *= 2;
  return nside;
}

double SphereMap::at(const Eigen::Vector3d& u) const {
  const long p = grid.pixel_of(u);
  return weight[p] > 0 ? sum[p] / weight[p] : std::nan("");
}

double SphereMap::coverage() const {
  return double(std::count_if(weight.begin(), weight.end(), [](double w) { return w > 0; })) / weight.size();
}

void SphereMap::add(const SphereMap& other) {
  if (other.grid.nside() != grid.nside()) fail("cannot add sphere maps of different nside");
  for (size_t k = 0; k < sum.size(); ++k) sum[k] += other.sum[k], weight[k] += other.weight[k];
}

DetectorRays::DetectorRays(const DetectorGeometry& g) : width(g.width()), height(g.height()) {
  const double L = g.spec().distance_px;
  direction.reserve(static_cast<size_t>(width) * height);
  solid_angle.reserve(static_cast<size_t>(width) * height);
  for (int i = 0; i < height; ++i)
    for (int j = 0; j < width; ++j) {
      direction.push_back(g.pixel_direction(j, i).vec());
      const double dx = j + 0.5 - g.spec().pc_px.x(), dy = i + 0.5 - g.spec().pc_px.y();
      const double r = std::sqrt(dx * dx + dy * dy + L * L);
      solid_angle.push_back(L / (r * r * r));
    }
}

void sphere_pixels(const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
                   const SphereGrid& grid, long* pixel) {
  const Eigen::Matrix3d m = g.matrix();
  for (size_t q = 0; q < rays.direction.size(); ++q)
    pixel[q] = !mask.empty() && !mask[q] ? -1 : grid.pixel_of(m * rays.direction[q]);
}

void back_project(const float* pattern, const std::vector<uint8_t>& mask, const DetectorRays& rays, const long* pixel,
                  SphereMap& into) {
  for (size_t q = 0; q < rays.direction.size(); ++q) {
    if (!mask.empty() && !mask[q]) continue;
    into.sum[pixel[q]] += pattern[q] * rays.solid_angle[q];
    into.weight[pixel[q]] += rays.solid_angle[q];
  }
}

void back_project(const float* pattern, const std::vector<uint8_t>& mask, const DetectorRays& rays, const Rotation& g,
                  SphereMap& into) {
  thread_local std::vector<long> pixel;
  pixel.resize(rays.direction.size());
  sphere_pixels(mask, rays, g, into.grid, pixel.data());
  back_project(pattern, mask, rays, pixel.data(), into);
}

SphereMap fold_by_symmetry(const SphereMap& map, const CrystalSymmetry& symmetry) {
  SphereMap out(map.grid);
  std::vector<Eigen::Matrix3d> ops;
  for (const Rotation& s : symmetry.operators()) ops.push_back(s.matrix());
#pragma omp parallel for schedule(static)
  for (long p = 0; p < map.grid.npix(); ++p) {
    const Eigen::Vector3d c = map.grid.centre_of(p);
    double s = 0, w = 0;
    for (const Eigen::Matrix3d& op : ops)
      for (double sign : {1.0, -1.0}) {  // Laue group: with the inversion (Friedel)
        const long q = map.grid.pixel_of(sign * (op * c));
        s += map.sum[q], w += map.weight[q];
      }
    out.sum[p] = s;
    out.weight[p] = w;
  }
  return out;
}

namespace {

template <class Colour>
RgbImage stereographic(const SphereMap& map, int size, Colour colour) {
  RgbImage img;
  img.width = img.height = size;
  img.rgb.assign(static_cast<size_t>(size) * size * 3, 255);
  for (int i = 0; i < size; ++i)
    for (int j = 0; j < size; ++j) {
      // Stereographic projection from the south pole: (X, Y) in the unit disc ↔ upper hemisphere.
      const double X = (2.0 * (j + 0.5) / size - 1), Y = -(2.0 * (i + 0.5) / size - 1);
      const double r2 = X * X + Y * Y;
      if (r2 > 1) continue;
      const Eigen::Vector3d u(2 * X / (1 + r2), 2 * Y / (1 + r2), (1 - r2) / (1 + r2));
      const double v = map.at(u);
      if (std::isnan(v)) continue;
      const auto c = colour(v);
      std::copy(c.begin(), c.end(), img.rgb.begin() + (static_cast<size_t>(i) * size + j) * 3);
    }
  return img;
}

std::pair<double, double> percentiles(const SphereMap& map, double lo, double hi) {
  std::vector<double> v;
  for (long p = 0; p < map.grid.npix(); ++p)
    if (map.weight[p] > 0) v.push_back(map.value(p));
  if (v.empty()) return {0, 1};
  std::sort(v.begin(), v.end());
  return {v[static_cast<size_t>(lo * (v.size() - 1))], v[static_cast<size_t>(hi * (v.size() - 1))]};
}

}  // namespace

RgbImage stereographic_image(const SphereMap& map, int size) {
  const std::pair<double, double> range = percentiles(map, 0.01, 0.99);
  const double lo = range.first, hi = range.second;
  return stereographic(map, size, [&](double v) {
    const double t = std::clamp((v - lo) / std::max(hi - lo, 1e-30), 0.0, 1.0);
    const auto g = static_cast<uint8_t>(std::lround(30 + 225 * t));
    return std::array<uint8_t, 3>{g, g, g};
  });
}

RgbImage stereographic_image_signed(const SphereMap& map, int size) {
  const std::pair<double, double> range = percentiles(map, 0.01, 0.99);
  const double lo = range.first, hi = range.second;
  const double scale = std::max({std::abs(lo), std::abs(hi), 1e-30});
  return stereographic(map, size, [&](double v) {
    const double t = std::clamp(v / scale, -1.0, 1.0);
    const auto fade = [](double x) { return static_cast<uint8_t>(std::lround(255 * (1 - x))); };
    return t >= 0 ? std::array<uint8_t, 3>{255, fade(t), fade(t)} : std::array<uint8_t, 3>{fade(-t), fade(-t), 255};
  });
}

}  // namespace orderband
