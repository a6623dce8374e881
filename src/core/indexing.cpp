// Band indexing by pair proposals and band votes.
#include "orderband/indexing.hpp"

#include <algorithm>
#include <cmath>

#include "orderband/error.hpp"
#include "orderband/laue_group.hpp"
#include "orderband/ordering_pair.hpp"
#include "orderband/units.hpp"

namespace orderband {

Indexer::Indexer(const Phase& parent, double kv, const IndexingSpec& spec)
    : spec_(spec), symmetry_(laue_rotations(parent)) {
  // Strong families first: proposals come from pairs of those, votes count all reference planes.
  std::vector<Eigen::Vector3d> weak;
  for (const PhaseFamily& f : phase_family_table(parent, kv, spec.d_min_A)) {
    if (f.rel_intensity < spec.min_rel_intensity) continue;
    for (const CrystalDirection& n : f.family.normals)
      (f.rel_intensity >= spec.proposal_rel_intensity ? refs_ : weak).push_back(n.vec());
  }
  const int strong = static_cast<int>(refs_.size());
  refs_.insert(refs_.end(), weak.begin(), weak.end());
  if (strong < 3) fail(parent.source, ": fewer than 3 strong plane normals to index with");
  for (int a = 0; a < strong; ++a)
    for (int b = a + 1; b < strong; ++b) {
      const double angle = std::acos(std::min(1.0, std::abs(refs_[a].dot(refs_[b]))));
      if (angle > deg_to_rad(5)) pairs_.push_back({a, b, angle});
    }
  std::sort(pairs_.begin(), pairs_.end(), [](const RefPair& x, const RefPair& y) { return x.angle < y.angle; });
}

namespace {
Eigen::Matrix3d triad(const Eigen::Vector3d& a, const Eigen::Vector3d& b) {
  Eigen::Matrix3d m;
  m.col(0) = a.normalized();
  m.col(1) = a.cross(b).normalized();
  m.col(2) = m.col(0).cross(m.col(1));
  return m;
}
}  // namespace

std::optional<IndexingResult> Indexer::index(const std::vector<DetectedBand>& bands) const {
  const auto c = candidates(bands, 1);
  if (c.empty()) return std::nullopt;
  return c.front();
}

std::vector<IndexingResult> Indexer::candidates(const std::vector<DetectedBand>& bands, int count) const {
  const int n = static_cast<int>(bands.size());
  std::vector<std::pair<double, IndexingResult>> found;
  if (n < spec_.min_bands_matched) return {};
  const double tol = deg_to_rad(spec_.angle_tolerance_deg), cos_tol = std::cos(tol);
  auto score = [&](const Eigen::Matrix3d& g) {
    int matched = 0;
    double residual = 0, strength = 0;
    for (const DetectedBand& band : bands) {
      const Eigen::Vector3d c = g * band.normal.vec();
      double best_dot = 0;
      for (const Eigen::Vector3d& r : refs_) best_dot = std::max(best_dot, std::abs(c.dot(r)));
      if (best_dot >= cos_tol) {
        ++matched;
        residual += std::acos(std::min(1.0, best_dot));
        strength += band.strength;
      }
    }
    return std::tuple<int, double, double>{matched, matched ? residual / matched : 0.0, strength};
  };
  const int proposers = std::min(n, spec_.proposal_bands);  // pairs among the strongest bands
  for (int i = 0; i < proposers; ++i)
    for (int j = i + 1; j < proposers; ++j) {
      const Eigen::Vector3d ni = bands[i].normal.vec(), nj = bands[j].normal.vec();
      const double dij = ni.dot(nj);
      const double angle = std::acos(std::min(1.0, std::abs(dij)));
      if (angle < deg_to_rad(5)) continue;  // nearly parallel: no orientation from this pair
      const Eigen::Matrix3d t = triad(ni, nj);
      auto lo = std::lower_bound(pairs_.begin(), pairs_.end(), angle - tol,
                                 [](const RefPair& p, double v) { return p.angle < v; });
      for (auto it = lo; it != pairs_.end() && it->angle <= angle + tol; ++it) {
        for (double s1 : {1.0, -1.0}) {
          const Eigen::Vector3d ra = s1 * refs_[it->a];
          // Choose the sense of the second reference so that the dot products agree in sign.
          const Eigen::Vector3d rb = ((ra.dot(refs_[it->b]) >= 0) == (dij >= 0) ? 1.0 : -1.0) * refs_[it->b];
          const Eigen::Matrix3d g = triad(ra, rb) * t.transpose();  // sample → crystal
          const auto [matched, residual, strength] = score(g);
          if (matched < spec_.min_bands_matched) continue;
          // More bands first; among equals, the stronger set, then the smaller residual.
          const double s = matched * 1e6 + strength * 1e2 - rad_to_deg(residual);
          IndexingResult r;
          r.orientation = Rotation::from_matrix(g);
          r.bands_matched = matched;
          r.bands_detected = n;
          r.fit_residual_deg = rad_to_deg(residual);
          found.emplace_back(s, r);
        }
      }
    }
  std::sort(found.begin(), found.end(), [](const auto& a, const auto& b) { return a.first > b.first; });
  std::vector<IndexingResult> out;
  const double distinct = deg_to_rad(3.0);
  for (const auto& [score_value, r] : found) {
    if (static_cast<int>(out.size()) >= count) break;
    bool seen = false;
    for (const IndexingResult& o : out)
      seen = seen || symmetry_.misorientation_angle(o.orientation, r.orientation) < distinct;
    if (seen) continue;
    out.push_back(r);
    out.back().orientation = symmetry_.reduce(r.orientation);
  }
  return out;
}

}  // namespace orderband
