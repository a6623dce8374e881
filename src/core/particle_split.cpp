// Splitting touching particles by markers and flooding.
#include "orderband/particle_split.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <queue>

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
  const double step = grid.step_um;
  std::vector<float> out(f.size(), std::nanf(""));
  for (size_t k = 0; k < f.size(); ++k) {
    if (std::isnan(f[k])) continue;
    const GridPoint p = grid.point(k);
    const Eigen::Vector2d c = grid.position_um(p);
    double s = 0, w = 0;
    for (int dr = -reach; dr <= reach; ++dr)
      for (int dc = -reach; dc <= reach; ++dc) {
        const GridPoint q{p.row + dr, p.col + dc};
        if (q.row < 0 || q.col < 0 || q.row >= grid.rows || q.col >= grid.cols) continue;
        const float v = f[grid.index(q)];
        if (std::isnan(v)) continue;
        const double d = (grid.position_um(q) - c).norm() / step;
        if (d > 3 * sigma) continue;
        const double wt = std::exp(-0.5 * d * d / (sigma * sigma));
        s += wt * v, w += wt;
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
                                      int connectivity) {
  const size_t n = g.size();
  if (inside.size() != n) fail("splitting: ", inside.size(), " flags for ", n, " points");
  std::vector<int32_t> label(n, 0);
  int32_t next = 0;
  using Item = std::pair<float, size_t>;  // (g, point): the highest first
  std::priority_queue<Item> queue;
  if (std::isfinite(depth)) {
    const std::vector<float> dynamic = maxima_dynamics(grid, g, connectivity);
    for (size_t k = 0; k < n; ++k)
      if (inside[k] && !std::isnan(g[k]) && dynamic[k] >= depth && g[k] - dynamic[k] <= max_saddle)
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

}  // namespace orderband
