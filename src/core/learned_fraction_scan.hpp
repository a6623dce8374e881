// Internal: the data-led estimator run on a scan (the learning itself is learned_fraction.hpp).
#pragma once

#include <vector>

#include "fraction_context.hpp"
#include "orderband/row_store.hpp"

namespace orderband {

/// The learned ordered − disordered profile difference per family, for the report.
struct LearnedFamilies {
  std::vector<std::vector<double>> difference;  ///< per family and bin
  std::vector<double> u;                        ///< bin centres, θ_B units
};

/// Features are the crystal-frame profiles of every chosen family binned with the grain's
/// orientation, from patterns kept linear in the phase mixture (no unit-variance scaling); the
/// model gives only geometry, the second lattice's band positions at grain boundaries and the
/// first split of the points. Fills `r`'s per-point vectors (one entry per point), its estimator
/// fields and end members; the features are collected row by row, resumable from `store`.
LearnedFamilies estimate_learned(const FractionScan& scan, FractionResults& r, const ProgressFn& progress,
                                 RowStore* store);

}  // namespace orderband
