// Orientations given per scan point (an orientation table read from a file).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "orderband/rotation.hpp"

namespace orderband {

/// One orientation per scan point, in scan order. An absent orientation
/// (unusable point) is written with empty angle fields.
struct OrientationTable {
  std::vector<std::optional<Rotation>> orientations;
  std::vector<std::string> phases;  ///< optional phase label per point ("" if none)
};

}  // namespace orderband
