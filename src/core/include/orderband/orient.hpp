// Orientations for every scan point: find (detect, index, refine) or read and refine; then grains.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "orderband/band_detect.hpp"
#include "orderband/grains.hpp"
#include "orderband/indexing.hpp"
#include "orderband/preprocess.hpp"
#include "orderband/refine.hpp"
#include "orderband/row_store.hpp"
#include "orderband/scan_inputs.hpp"

namespace orderband {

/// Why a point has no orientation (0: it has one).
enum class PointStatus : uint8_t {
  ok = 0,
  unusable_pattern = 1,  ///< constant inside the mask (dead pattern)
  too_few_bands = 2,     ///< fewer bands matched than the indexing needs
  fit_failed = 3,        ///< refinement left the model uncorrelated with the pattern
  missing_in_file = 4,   ///< the orientation file gives no angles for this point
};
const char* point_status_name(PointStatus s);

struct OrientSpec {
  BandDetectSpec detect;
  IndexingSpec index;
  RefineSpec refine;
  GrainSpec grains;
  double min_correlation = 0.15;  ///< refined model–pattern correlation below this: fit failed
  int candidates = 12;            ///< best-voted solutions compared by model correlation
  /// Grain-level check for pseudo-symmetric solutions: points sampled per grain, candidates
  /// refined per sample, and the gain in model correlation that counts as a better fit.
  int pseudo_symmetry_samples = 8;
  int pseudo_symmetry_candidates = 4;
  double pseudo_symmetry_gain = 0.05;
  /// Orientations from the row above first: a point is refined from the orientations of its three
  /// nearest points in the previous row, best fitted first, and keeps the first converged fit whose
  /// model correlation is within `neighbour_margin` of that point's own; only where none fits is it
  /// indexed from its bands. A
  /// grain's first row pays for indexing, the rest for a refinement. Off: every point is indexed.
  bool from_neighbours = true;
  double neighbour_margin = 0.05;
};

struct OrientationResults {
  std::vector<std::optional<Rotation>> orientation;
  std::vector<uint8_t> status;
  std::vector<int16_t> bands_matched;   ///< −1 where not found from the pattern
  std::vector<float> fit_residual_deg;  ///< indexing residual; NaN where not indexed
  std::vector<float> correlation;       ///< model–pattern correlation after refinement (pattern quality)
  GrainMap grains;
  std::vector<float> kam_deg;
  int pseudo_symmetric_grains = 0;     ///< grains found on a pseudo-symmetric solution and mapped
  size_t pseudo_symmetric_points = 0;  ///< points of those grains that took the mapped orientation
  size_t points_joined_to_grain = 0;   ///< points far from their grain's mean that took it
  size_t points_from_neighbours = 0;   ///< points refined from the row above, not indexed (OrientSpec::from_neighbours)
  /// Patterns that could not be used as stored (PatternSource::faults): point index → reason.
  std::map<size_t, std::string> pattern_faults;
  size_t usable() const;
  size_t with_orientation() const;
};

/// Runs the orientation stage of a scan: preprocesses the patterns (streamed
/// by rows), then per point either finds the orientation (band detection,
/// indexing against the parent phase, Gauss–Newton refinement) or takes it
/// from the inputs' orientation table and refines it (unless refine = false), and
/// finally segments grains. Multi-threaded over the points of each row.
/// With a RowStore, finished rows are saved, and rows saved by an earlier (interrupted) run
/// are taken from it instead of being computed again; the results are the same either way.
OrientationResults orient_scan(const ScanInputs& inputs, const OrientSpec& spec = {}, const ProgressFn& progress = {},
                               RowStore* store = nullptr);

}  // namespace orderband
