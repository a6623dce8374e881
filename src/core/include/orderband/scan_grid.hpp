// Scan grids: square and hexagonal point layouts, positions and neighbours.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <vector>

#include "orderband/enum_names.hpp"

namespace orderband {

enum class GridKind { square, hexagonal };
template <>
struct EnumNames<GridKind> {
  static constexpr std::array<std::pair<GridKind, std::string_view>, 2> names{
      {{GridKind::square, "square"}, {GridKind::hexagonal, "hexagonal"}}};
};

/// A point of the scan by row and column.
struct GridPoint {
  int row = 0, col = 0;
  bool operator==(const GridPoint&) const = default;
};

/// Square grid: point (r, c) at (c·step, r·step) µm along (x_S, y_S).
/// Hexagonal grid: every row has `cols` points, odd rows are offset by half
/// a step along x_S, and rows are step·√3/2 apart, so each inner point has
/// six neighbours at one step.
struct ScanGrid {
  GridKind kind = GridKind::square;
  int rows = 0, cols = 0;
  double step_um = 0;

  size_t count() const { return static_cast<size_t>(rows) * static_cast<size_t>(cols); }
  size_t index(GridPoint p) const { return static_cast<size_t>(p.row) * cols + p.col; }
  GridPoint point(size_t index) const { return {static_cast<int>(index / cols), static_cast<int>(index % cols)}; }
  bool contains(GridPoint p) const { return p.row >= 0 && p.row < rows && p.col >= 0 && p.col < cols; }

  /// Position in µm along x_S (columns) and y_S (rows).
  Eigen::Vector2d position_um(GridPoint p) const;
  double row_spacing_um() const;
  /// Width and height of the scanned field (µm), counting one step per point.
  double field_width_um() const;
  double field_height_um() const;

  /// Neighbours inside the grid: square grids 4 (edge) or 8 (edge + corner)
  /// connectivity; hexagonal grids always the 6 nearest points.
  std::vector<GridPoint> neighbours(GridPoint p, int square_connectivity = 8) const;
  /// The points a beam centred on p reaches besides p: within `reach_rows` rows and `reach_cols`
  /// columns; at a reach of one step each way, the 8 (hexagonal: 6) neighbours.
  std::vector<GridPoint> within_reach(GridPoint p, int reach_rows, int reach_cols) const;

  /// Throws orderband::Error for non-positive sizes or step.
  void validate() const;
};

}  // namespace orderband
