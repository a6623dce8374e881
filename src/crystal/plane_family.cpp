// Enumeration of plane families under the Laue group.
#include "orderband/plane_family.hpp"

#include <algorithm>
#include <cmath>
#include <set>
#include <tuple>

#include "orderband/error.hpp"
#include "orderband/laue_group.hpp"

namespace orderband {
namespace {

using Key = std::tuple<int, int, int>;
Key key_of(const Eigen::Vector3i& h) { return {h.x(), h.y(), h.z()}; }

bool lex_greater(const Eigen::Vector3i& a, const Eigen::Vector3i& b) { return key_of(a) > key_of(b); }

/// Of ±h, the one whose first non-zero index is positive.
Eigen::Vector3i plane_sign(const Eigen::Vector3i& h) {
  for (int i = 0; i < 3; ++i)
    if (h[i] != 0) return h[i] > 0 ? h : Eigen::Vector3i(-h);
  return h;
}

}  // namespace

std::string miller_label(const Eigen::Vector3i& hkl, char open, char close) {
  std::string s(1, open);
  const bool wide = hkl.cwiseAbs().maxCoeff() > 9;
  for (int i = 0; i < 3; ++i) {
    if (wide && i > 0) s += ' ';
    s += std::to_string(hkl[i]);
  }
  return s + close;
}

std::string PlaneFamily::label() const { return miller_label(hkl); }

std::vector<PlaneFamily> enumerate_plane_families(const Phase& phase, double d_min_A) {
  if (!(d_min_A > 0)) fail("d-spacing limit must be positive, got ", d_min_A, " Å");
  const UnitCell& cell = phase.cell;
  const std::vector<Eigen::Matrix3d> rotations = laue_rotations(phase);
  // |h| = |g · a| ≤ |a| / d, so this box holds every plane with d ≥ d_min.
  const int hmax = static_cast<int>(std::floor(cell.a_A / d_min_A + 1e-9));
  const int kmax = static_cast<int>(std::floor(cell.b_A / d_min_A + 1e-9));
  const int lmax = static_cast<int>(std::floor(cell.c_A / d_min_A + 1e-9));
  if (static_cast<long>(2 * hmax + 1) * (2 * kmax + 1) * (2 * lmax + 1) > 20'000'000)
    fail("d-spacing limit ", d_min_A, " Å is too small for this cell (too many planes)");

  std::set<Key> visited;
  std::vector<PlaneFamily> families;
  for (int h = -hmax; h <= hmax; ++h)
    for (int k = -kmax; k <= kmax; ++k)
      for (int l = -lmax; l <= lmax; ++l) {
        const Eigen::Vector3i hkl(h, k, l);
        if (hkl.isZero() || visited.count(key_of(hkl))) continue;
        const double d = cell.d_spacing_A(hkl);
        if (d < d_min_A * (1 - 1e-12)) continue;
        const Eigen::Vector3d g = cell.reciprocal(hkl.cast<double>());
        std::set<Key> orbit;
        for (const Eigen::Matrix3d& r : rotations) {
          const Eigen::Vector3d m = cell.miller_of(r * g);
          const Eigen::Vector3i mi = m.array().round().cast<int>();
          if ((m - mi.cast<double>()).norm() > 1e-6)
            fail(phase.source, ": symmetry maps (", h, k, l, ") to non-integer indices");
          orbit.insert(key_of(mi));
          orbit.insert(key_of(-mi));
        }
        PlaneFamily fam;
        fam.d_A = d;
        std::set<Key> planes;
        for (const Key& kk : orbit) {
          visited.insert(kk);
          const Eigen::Vector3i m(std::get<0>(kk), std::get<1>(kk), std::get<2>(kk));
          if (lex_greater(m, fam.hkl) || fam.hkl.isZero()) fam.hkl = m;
          planes.insert(key_of(plane_sign(m)));
        }
        // Members in descending lexicographic order, so the representative comes first.
        for (auto it = planes.rbegin(); it != planes.rend(); ++it) {
          const Eigen::Vector3i m(std::get<0>(*it), std::get<1>(*it), std::get<2>(*it));
          fam.members.push_back(m);
          fam.normals.emplace_back(cell.reciprocal(m.cast<double>()));
        }
        fam.multiplicity = static_cast<int>(fam.members.size());
        families.push_back(std::move(fam));
      }
  std::sort(families.begin(), families.end(), [](const PlaneFamily& a, const PlaneFamily& b) {
    if (std::abs(a.d_A - b.d_A) > 1e-9) return a.d_A > b.d_A;
    return lex_greater(a.hkl, b.hkl);
  });
  return families;
}

}  // namespace orderband
