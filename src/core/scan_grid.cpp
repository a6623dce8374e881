// Scan-grid positions and neighbourhoods.
#include "orderband/scan_grid.hpp"

#include <cmath>

#include "orderband/error.hpp"

namespace orderband {

Eigen::Vector2d ScanGrid::position_um(GridPoint p) const {
  double x = p.col * step_um;
  if (kind == GridKind::hexagonal && (p.row & 1)) x += 0.5 * step_um;
  return {x, p.row * row_spacing_um()};
}

double ScanGrid::row_spacing_um() const { return kind == GridKind::hexagonal ? step_um * std::sqrt(3.0) / 2 : step_um; }

double ScanGrid::field_width_um() const { return cols * step_um; }
double ScanGrid::field_height_um() const { return rows * row_spacing_um(); }

std::vector<GridPoint> ScanGrid::neighbours(GridPoint p, int square_connectivity) const {
  std::vector<GridPoint> out;
  auto add = [&](int dr, int dc) {
    const GridPoint q{p.row + dr, p.col + dc};
    if (contains(q)) out.push_back(q);
  };
  if (kind == GridKind::square) {
    add(-1, 0), add(0, -1), add(0, 1), add(1, 0);
    if (square_connectivity == 8)
      add(-1, -1), add(-1, 1), add(1, -1), add(1, 1);
    else if (square_connectivity != 4)
      fail("square-grid connectivity must be 4 or 8, got ", square_connectivity);
    return out;
  }
  // Hexagonal: odd rows sit half a step to the right of even rows.
  const int shift = (p.row & 1) ? 0 : -1;
  add(0, -1), add(0, 1);
  add(-1, shift), add(-1, shift + 1), add(1, shift), add(1, shift + 1);
  return out;
}

std::vector<GridPoint> ScanGrid::within_reach(GridPoint p, int reach_rows, int reach_cols) const {
  if (reach_rows <= 1 && reach_cols <= 1) return neighbours(p, 8);
  std::vector<GridPoint> out;
  for (int dr = -reach_rows; dr <= reach_rows; ++dr)
    for (int dc = -reach_cols; dc <= reach_cols; ++dc)
      if (const GridPoint q{p.row + dr, p.col + dc}; (dr != 0 || dc != 0) && contains(q)) out.push_back(q);
  return out;
}

void ScanGrid::validate() const {
  if (rows <= 0 || cols <= 0) fail("scan grid must have positive rows and cols, got ", rows, " x ", cols);
  if (!(step_um > 0) || !std::isfinite(step_um)) fail("scan step must be a positive number of µm, got ", step_um);
}

}  // namespace orderband
