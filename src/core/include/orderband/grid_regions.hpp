// Connected regions of scan points: the one labeller for grains and particles.
#pragma once

#include <cstddef>
#include <cstdint>
#include <deque>
#include <vector>

#include "orderband/scan_grid.hpp"

namespace orderband {

/// Connected regions over the grid's neighbours (square grids: 4 or 8 by `square_connectivity`;
/// hexagonal grids: 6): a point where `member(k)` holds and no label is yet set starts a region;
/// a neighbour j that is a member joins k's region where `joins(k, j)` holds. Labels 1…n in scan
/// order of the regions' first points, 0 elsewhere; returns n.
template <class Member, class Joins>
int label_regions(const ScanGrid& grid, int square_connectivity, Member member, Joins joins,
                  std::vector<int32_t>& label) {
  label.assign(grid.count(), 0);
  int next = 0;
  for (size_t start = 0; start < label.size(); ++start) {
    if (label[start] || !member(start)) continue;
    label[start] = ++next;
    std::deque<size_t> queue{start};
    while (!queue.empty()) {
      const size_t k = queue.front();
      queue.pop_front();
      for (const GridPoint& nb : grid.neighbours(grid.point(k), square_connectivity)) {
        const size_t j = grid.index(nb);
        if (label[j] || !member(j) || !joins(k, j)) continue;
        label[j] = next;
        queue.push_back(j);
      }
    }
  }
  return next;
}

}  // namespace orderband
