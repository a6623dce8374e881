// Internal: the model-led estimators (profile and windows), point by point against the references.
#pragma once

#include <vector>

#include "fraction_context.hpp"
#include "fraction_reference.hpp"
#include "orderband/row_store.hpp"

namespace orderband {

/// Per superlattice family, summed over points: signal over noise (num) and points (den); their
/// ratio is the family's separation of the two phases in the diagnostics.
struct FamilySeparation {
  std::vector<double> num, den;
};

/// Every point's raw fraction, its uncertainty, pattern quality and reason (into `r`, whose
/// per-point vectors hold one entry per point), row by row and resumable from `store`. `refs`:
/// each grain's reference (index = grain id).
FamilySeparation estimate_model_led(const FractionScan& scan, const std::vector<FractionReference>& refs,
                                    FractionResults& r, const ProgressFn& progress, RowStore* store);

}  // namespace orderband
