// A trial's summary for the comparison, read from the summary.json that `map` wrote.
#pragma once

#include <string>

#include "orderband/screen_comparison.hpp"

namespace orderband {

/// The comparison's numbers from the text of a map's summary.json; `what` names the file in
/// errors (a missing or malformed field is an Error naming it).
TrialSummary parse_trial_summary(const std::string& text, const std::string& what);

}  // namespace orderband
