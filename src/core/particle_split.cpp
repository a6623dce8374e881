// Splitting touching particles by markers and flooding.
#include "orderband/particle_split.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numeric>
#include <queue>
#include <utility>

#include "orderband/error.hpp"

namespace orderband {
namespace {

std::vector<size_t> neighbour_indices(const ScanGrid& grid, size_t k, int connectivity) {
  std::vector<size_t> out;
  for (const GridPoint& nb : grid.neighbours(grid.point(k), connectivity)) out.push_back(grid.index(nb));
  return out;
}

/// Points in descending order of g (NaN last), ties by index.
std::vector<size_t> descending(const std::vector<float>& g) {
  std::vector<size_t> order(g.size());
  std::iota(order.begin(), order.end(), 0);
  auto key = [&](size_t k) { return std::isnan(g[k]) ? -std::numeric_limits<float>::infinity() : g[k]; };
  std::stable_sort(order.begin(), order.end(), [&](size_t a, size_t b) { return key(a) > key(b); });
  return order;
}

}  // namespace

std::vector<float> smooth_map(const ScanGrid& grid, const std::vector<float>& f, double sigma) {
  if (f.size() != grid.count()) fail("smoothing: ", f.size(), " values for ", grid.count(), " points");
  if (!(sigma > 0)) return f;
  const int reach = static_cast<int>(std::ceil(3 * sigma)) + 1;
  // The kernel's offsets and weights, once per row parity (a hexagonal grid's odd rows are shifted
  // by half a step): points within 3 σ.
  struct Tap {
    int dr, dc;
    double weight;
  };
  std::vector<Tap> kernel[2];
  for (int parity = 0; parity < 2; ++parity) {
    const GridPoint p{parity, 0};
    const Eigen::Vector2d c = grid.position_um(p);
    for (int dr = -reach; dr <= reach; ++dr)
      for (int dc = -reach; dc <= reach; ++dc) {
        const double d = (grid.position_um({p.row + dr, p.col + dc}) - c).norm() / grid.step_um;
        if (d <= 3 * sigma) kernel[parity].push_back({dr, dc, std::exp(-0.5 * d * d / (sigma * sigma))});
      }
  }
  std::vector<float> out(f.size(), std::nanf(""));
  for (size_t k = 0; k < f.size(); ++k) {
    if (std::isnan(f[k])) continue;
    const GridPoint p = grid.point(k);
    double s = 0, w = 0;
    for (const Tap& t : kernel[grid.kind == GridKind::hexagonal ? p.row % 2 : 0]) {
      const GridPoint q{p.row + t.dr, p.col + t.dc};
      if (q.row < 0 || q.col < 0 || q.row >= grid.rows || q.col >= grid.cols) continue;
      const float v = f[grid.index(q)];
      if (std::isnan(v)) continue;
      s += t.weight * v, w += t.weight;
    }
    out[k] = static_cast<float>(s / w);
  }
  return out;
}

std::vector<float> maxima_dynamics(const ScanGrid& grid, const std::vector<float>& g, int connectivity) {
  const size_t n = g.size();
  std::vector<size_t> parent(n), peak(n);
  std::vector<uint8_t> seen(n, 0);
  std::vector<float> dynamic(n, 0.0f);
  std::iota(parent.begin(), parent.end(), 0);
  std::iota(peak.begin(), peak.end(), 0);
  auto root = [&](size_t a) {
    while (parent[a] != a) a = parent[a] = parent[parent[a]];
    return a;
  };
  for (size_t k : descending(g)) {
    if (std::isnan(g[k])) break;
    seen[k] = 1;
    std::vector<size_t> roots;
    for (size_t j : neighbour_indices(grid, k, connectivity))
      if (seen[j] && !std::isnan(g[j])) roots.push_back(root(j));
    std::sort(roots.begin(), roots.end());
    roots.erase(std::unique(roots.begin(), roots.end()), roots.end());
    if (roots.empty()) {
      dynamic[k] = std::numeric_limits<float>::infinity();  // a new maximum; finite once it merges
      continue;
    }
    // The part with the highest peak survives; every other part's maximum dies here.
    const size_t keep =
        *std::max_element(roots.begin(), roots.end(), [&](size_t a, size_t b) { return g[peak[a]] < g[peak[b]]; });
    for (size_t r : roots)
      if (r != keep) dynamic[peak[r]] = g[peak[r]] - g[k], parent[r] = keep;
    parent[k] = keep;
  }
  return dynamic;
}

std::vector<int32_t> split_by_markers(const ScanGrid& grid, const std::vector<float>& g,
                                      const std::vector<uint8_t>& inside, double depth, double max_saddle,
                                      int connectivity, double max_saddle_share) {
  const size_t n = g.size();
  if (inside.size() != n) fail("splitting: ", inside.size(), " flags for ", n, " points");
  std::vector<int32_t> label(n, 0);
  int32_t next = 0;
  using Item = std::pair<float, size_t>;  // (g, point): the highest first
  std::priority_queue<Item> queue;
  if (std::isfinite(depth)) {
    const std::vector<float> dynamic = maxima_dynamics(grid, g, connectivity);
    for (size_t k = 0; k < n; ++k)
      if (inside[k] && !std::isnan(g[k]) && dynamic[k] >= depth && g[k] - dynamic[k] <= max_saddle &&
          g[k] - dynamic[k] <= max_saddle_share * g[k])
        label[k] = ++next, queue.push({g[k], k});
  }
  // A connected part of `inside` without a marker keeps its highest point as one.
  std::vector<uint8_t> reached(n, 0);
  for (size_t start = 0; start < n; ++start) {
    if (!inside[start] || reached[start] || std::isnan(g[start])) continue;
    std::vector<size_t> part{start};
    reached[start] = 1;
    bool marked = label[start] > 0;
    size_t top = start;
    for (size_t head = 0; head < part.size(); ++head)
      for (size_t j : neighbour_indices(grid, part[head], connectivity))
        if (inside[j] && !reached[j] && !std::isnan(g[j])) {
          reached[j] = 1, part.push_back(j), marked |= label[j] > 0;
          if (g[j] > g[top]) top = j;
        }
    if (!marked) label[top] = ++next, queue.push({g[top], top});
  }
  while (!queue.empty()) {
    const size_t k = queue.top().second;
    queue.pop();
    for (size_t j : neighbour_indices(grid, k, connectivity))
      if (inside[j] && !label[j] && !std::isnan(g[j])) label[j] = label[k], queue.push({g[j], j});
  }
  return label;
}

namespace {

/// One part's points and the box around them with a margin of one point (its first row even, so a
/// hexagonal box keeps the parity of its rows).
struct PartBox {
  std::vector<size_t> points;
  int row0 = 0, col0 = 0, row1 = -1, col1 = -1;
  ScanGrid local(const ScanGrid& grid) const { return {grid.kind, row1 - row0 + 1, col1 - col0 + 1, grid.step_um}; }
};

std::map<int32_t, PartBox> part_boxes(const ScanGrid& grid, const std::vector<int32_t>& label) {
  std::map<int32_t, PartBox> parts;
  for (size_t k = 0; k < label.size(); ++k) {
    if (label[k] <= 0) continue;
    PartBox& b = parts[label[k]];
    const GridPoint p = grid.point(k);
    if (b.points.empty()) b.row0 = b.row1 = p.row, b.col0 = b.col1 = p.col;
    b.row0 = std::min(b.row0, p.row), b.row1 = std::max(b.row1, p.row);
    b.col0 = std::min(b.col0, p.col), b.col1 = std::max(b.col1, p.col);
    b.points.push_back(k);
  }
  for (auto& [id, b] : parts) {
    b.row0 = std::max(0, b.row0 - 1), b.col0 = std::max(0, b.col0 - 1);
    b.row1 = std::min(grid.rows - 1, b.row1 + 1), b.col1 = std::min(grid.cols - 1, b.col1 + 1);
    if (grid.kind == GridKind::hexagonal && b.row0 % 2) --b.row0;
  }
  return parts;
}

/// The part with every point it encloses: the box points not reached from the box's edge through
/// points off the part (the box has a margin, so the outside always touches its edge).
std::vector<uint8_t> with_holes_filled(const ScanGrid& local, const std::vector<uint8_t>& in_part, int connectivity) {
  std::vector<uint8_t> filled(in_part.size(), 1);
  std::vector<size_t> queue;
  for (size_t q = 0; q < local.count(); ++q) {
    const GridPoint p = local.point(q);
    const bool edge = p.row == 0 || p.col == 0 || p.row == local.rows - 1 || p.col == local.cols - 1;
    if (edge && !in_part[q]) filled[q] = 0, queue.push_back(q);
  }
  for (size_t head = 0; head < queue.size(); ++head)
    for (size_t j : neighbour_indices(local, queue[head], connectivity))
      if (filled[j] && !in_part[j]) filled[j] = 0, queue.push_back(j);
  return filled;
}

/// The lower envelope of the parabolas (x − s_i)² + f_i (sites at sorted positions s_i, f_i ≥ 0;
/// infinite f: no site) evaluated at the sorted queries x_j: Felzenszwalb & Huttenlocher, "Distance
/// transforms of sampled functions", Theory of Computing 8 (2012) 415, §2 (written for any
/// positions, not only integers). Infinity where there is no site.
void lower_envelope(const std::vector<double>& site, const std::vector<double>& f, const std::vector<double>& query,
                    std::vector<double>& out) {
  const double inf = std::numeric_limits<double>::infinity();
  std::vector<size_t> v;  // the parabolas of the envelope
  std::vector<double> z;  // z[k]: where parabola v[k] starts to be the lowest
  for (size_t q = 0; q < site.size(); ++q) {
    if (!std::isfinite(f[q])) continue;
    double start = -inf;
    while (!v.empty()) {
      const size_t p = v.back();
      start = ((f[q] + site[q] * site[q]) - (f[p] + site[p] * site[p])) / (2 * (site[q] - site[p]));
      if (start > z.back()) break;
      v.pop_back(), z.pop_back();
      start = -inf;
    }
    v.push_back(q), z.push_back(v.size() == 1 ? -inf : start);
  }
  out.assign(query.size(), inf);
  if (v.empty()) return;
  size_t k = 0;
  for (size_t j = 0; j < query.size(); ++j) {
    while (k + 1 < v.size() && z[k + 1] < query[j]) ++k;
    out[j] = (query[j] - site[v[k]]) * (query[j] - site[v[k]]) + f[v[k]];
  }
}

}  // namespace

std::vector<float> distance_to_outside(const ScanGrid& local, const std::vector<uint8_t>& in_part) {
  if (in_part.size() != local.count()) fail("distance: ", in_part.size(), " flags for ", local.count(), " points");
  const double inf = std::numeric_limits<double>::infinity();
  // Point positions in steps: x = col (+ 0.5 on odd rows of a hexagonal grid), y = row × spacing.
  const bool hex = local.kind == GridKind::hexagonal;
  const double dy = local.row_spacing_um() / local.step_um;
  auto x_of = [&](int row, int col) { return col + (hex && row % 2 ? 0.5 : 0.0); };
  // 1. Per row, the squared distance along x from every column position of either parity to the
  // row's nearest point off the part.
  const int parities = hex ? 2 : 1;
  std::vector<std::vector<double>> along(parities, std::vector<double>(local.count(), inf));
  std::vector<double> site, zero, query, out;
  for (int r = 0; r < local.rows; ++r) {
    site.clear();
    for (int c = 0; c < local.cols; ++c)
      if (!in_part[local.index({r, c})]) site.push_back(x_of(r, c));
    zero.assign(site.size(), 0.0);
    for (int parity = 0; parity < parities; ++parity) {
      query.clear();
      for (int c = 0; c < local.cols; ++c) query.push_back(c + 0.5 * parity);
      lower_envelope(site, zero, query, out);
      for (int c = 0; c < local.cols; ++c) along[parity][local.index({r, c})] = out[c];
    }
  }
  // 2. Per column position, down the rows: the envelope over the rows' distances at that position,
  // read at the rows whose points stand there.
  std::vector<float> d(local.count(), std::nanf(""));
  std::vector<double> f(local.rows);
  site.clear();
  for (int r = 0; r < local.rows; ++r) site.push_back(r * dy);
  for (int parity = 0; parity < parities; ++parity) {
    std::vector<int> rows;
    query.clear();
    for (int r = 0; r < local.rows; ++r)
      if ((hex ? r % 2 : 0) == parity) rows.push_back(r), query.push_back(r * dy);
    for (int c = 0; c < local.cols; ++c) {
      for (int r = 0; r < local.rows; ++r) f[r] = along[parity][local.index({r, c})];
      lower_envelope(site, f, query, out);
      for (size_t j = 0; j < rows.size(); ++j) {
        const size_t q = local.index({rows[j], c});
        if (in_part[q]) d[q] = static_cast<float>(std::sqrt(out[j]));
      }
    }
  }
  return d;
}

namespace {

/// Two-means of the positions, started from the halves across the major axis: per point, true for
/// the second group.
std::vector<bool> two_means(const std::vector<Eigen::Vector2d>& x, const Eigen::Vector2d& axis) {
  Eigen::Vector2d mean = Eigen::Vector2d::Zero();
  for (const Eigen::Vector2d& v : x) mean += v;
  mean /= static_cast<double>(x.size());
  std::vector<bool> side(x.size());
  for (size_t i = 0; i < x.size(); ++i) side[i] = (x[i] - mean).dot(axis) > 0;
  for (int it = 0; it < 20; ++it) {
    Eigen::Vector2d c[2] = {Eigen::Vector2d::Zero(), Eigen::Vector2d::Zero()};
    size_t n[2] = {0, 0};
    for (size_t i = 0; i < x.size(); ++i) c[side[i]] += x[i], ++n[side[i]];
    if (!n[0] || !n[1]) break;
    c[0] /= static_cast<double>(n[0]), c[1] /= static_cast<double>(n[1]);
    bool moved = false;
    for (size_t i = 0; i < x.size(); ++i) {
      const bool s = (x[i] - c[1]).squaredNorm() < (x[i] - c[0]).squaredNorm();
      moved = moved || s != side[i];
      side[i] = s;
    }
    if (!moved) break;
  }
  return side;
}

}  // namespace

ShapeMoments shape_moments(const ScanGrid& grid, const std::vector<size_t>& points) {
  ShapeMoments m;
  if (points.empty()) return m;
  const double n = static_cast<double>(points.size());
  for (size_t k : points) {
    const Eigen::Vector2d pos = grid.position_um(grid.point(k));
    m.cx += pos.x(), m.cy += pos.y();
  }
  m.cx /= n, m.cy /= n;
  for (size_t k : points) {
    const Eigen::Vector2d pos = grid.position_um(grid.point(k));
    const double dx = pos.x() - m.cx, dy = pos.y() - m.cy;
    m.mxx += dx * dx, m.myy += dy * dy, m.mxy += dx * dy;
  }
  m.mxx /= n, m.myy /= n, m.mxy /= n;
  const double xx = m.mxx + grid.step_um * grid.step_um / 12;
  const double yy = m.myy + grid.row_spacing_um() * grid.row_spacing_um() / 12;
  const double tr = xx + yy, det = xx * yy - m.mxy * m.mxy;
  const double disc = std::sqrt(std::max(0.0, tr * tr / 4 - det));
  const double l1 = tr / 2 + disc, l2 = std::max(tr / 2 - disc, 1e-30);
  m.aspect_ratio = std::sqrt(l1 / l2);
  m.major_axis_rad = 0.5 * std::atan2(2 * m.mxy, xx - yy);
  return m;
}

std::vector<std::vector<size_t>> split_elongated(const ScanGrid& grid, std::vector<std::vector<size_t>> parts,
                                                 double max_aspect, int min_points, size_t max_points) {
  std::vector<std::vector<size_t>> out;
  while (!parts.empty()) {
    std::vector<size_t> part = std::move(parts.back());
    parts.pop_back();
    if (part.size() > max_points || part.size() < 2 * static_cast<size_t>(std::max(min_points, 1))) {
      out.push_back(std::move(part));
      continue;
    }
    const ShapeMoments shape = shape_moments(grid, part);
    std::vector<Eigen::Vector2d> x;
    for (size_t k : part) x.push_back(grid.position_um(grid.point(k)));
    const Eigen::Vector2d axis(std::cos(shape.major_axis_rad), std::sin(shape.major_axis_rad));
    const std::vector<bool> side = shape.aspect_ratio >= max_aspect ? two_means(x, axis) : std::vector<bool>{};
    std::vector<size_t> halves[2];
    for (size_t i = 0; i < side.size(); ++i) halves[side[i]].push_back(part[i]);
    if (halves[0].size() < static_cast<size_t>(min_points) || halves[1].size() < static_cast<size_t>(min_points)) {
      out.push_back(std::move(part));
      continue;
    }
    parts.push_back(std::move(halves[0]));
    parts.push_back(std::move(halves[1]));
  }
  // Back in scan order of each part's first point.
  for (std::vector<size_t>& p : out) std::sort(p.begin(), p.end());
  std::sort(out.begin(), out.end(), [](const auto& a, const auto& b) { return a.front() < b.front(); });
  return out;
}

std::vector<int32_t> split_by_shape(const ScanGrid& grid, const std::vector<int32_t>& label, double depth_steps,
                                    int connectivity) {
  if (label.size() != grid.count()) fail("splitting: ", label.size(), " labels for ", grid.count(), " points");
  std::vector<int32_t> out(label.size(), 0);
  std::map<std::pair<int32_t, int32_t>, int32_t> renumber;  // (part, piece) → label, in scan order below
  std::vector<std::pair<int32_t, int32_t>> piece_of(label.size(), {0, 0});
  for (const auto& part : part_boxes(grid, label)) {
    const int32_t id = part.first;
    const PartBox& b = part.second;  // (a structured binding cannot be captured by clang 14)
    const ScanGrid local = b.local(grid);
    std::vector<uint8_t> in_part(local.count(), 0);
    auto local_index = [&](size_t k) {
      const GridPoint p = grid.point(k);
      return local.index({p.row - b.row0, p.col - b.col0});
    };
    for (size_t k : b.points) in_part[local_index(k)] = 1;
    const std::vector<float> d = distance_to_outside(local, with_holes_filled(local, in_part, connectivity));
    const std::vector<int32_t> pieces = split_by_markers(
        local, d, in_part, depth_steps, std::numeric_limits<double>::infinity(), connectivity, kShapeNeckShare);
    for (size_t k : b.points) piece_of[k] = {id, pieces[local_index(k)]};
  }
  int32_t next = 0;
  for (size_t k = 0; k < label.size(); ++k) {
    if (label[k] <= 0) continue;
    const auto [it, fresh] = renumber.try_emplace(piece_of[k], next + 1);
    if (fresh) ++next;
    out[k] = it->second;
  }
  return out;
}

}  // namespace orderband
