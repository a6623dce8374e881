// Ranking heat-treatment trials against a target window.
#include "orderband/trials.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace orderband {

const char* to_string(Verdict v) {
  return v == Verdict::inside ? "inside" : (v == Verdict::outside ? "outside" : "undecided");
}

std::vector<Ranked> rank_trials(const std::vector<TrialNumbers>& nums, const TargetWindow& t, int min_class_count) {
  std::vector<Ranked> out;
  char buf[240];
  for (size_t i = 0; i < nums.size(); ++i) {
    Ranked r;
    r.trial = i;
    bool undecided = false, outside = false;
    auto check_range = [&](const Measured& m, const std::optional<std::pair<double, double>>& w, const char* what,
                           const char* unit) {
      if (!w) return;
      const double width = w->second - w->first, v = m.value;
      if (v < w->first) r.distance += (w->first - v) / width;
      if (v > w->second) r.distance += (v - w->second) / width;
      const bool in = v >= w->first && v <= w->second;
      const bool surely_in = m.low >= w->first && m.high <= w->second;
      const bool surely_out = m.high < w->first || m.low > w->second;
      if (surely_in) return;
      if (surely_out)
        outside = true;
      else
        undecided = true;
      std::snprintf(
          buf, sizeof buf, "%s %.3g%s (95 %% CI %.3g–%.3g) %s the window [%.3g, %.3g]", what, v, unit, m.low, m.high,
          surely_out ? (v < w->first ? "below" : "above")
                     : (in ? "inside but its interval crosses an edge of" : "outside but its interval reaches"),
          w->first, w->second);
      r.reasons.push_back(buf);
    };
    check_range(nums[i].ordered_fraction, t.ordered_fraction, "ordered fraction", "");
    check_range(nums[i].secondary_mean_ecd_um, t.secondary_mean_ecd_um, "secondary mean ECD", " µm");
    if (t.max_primary_fraction && nums[i].primary_fraction > *t.max_primary_fraction) {
      r.distance += (nums[i].primary_fraction - *t.max_primary_fraction) / std::max(*t.max_primary_fraction, 1e-6);
      std::snprintf(buf, sizeof buf, "primary fraction %.3g above the limit %.3g", nums[i].primary_fraction,
                    *t.max_primary_fraction);
      r.reasons.push_back(buf);
      // Resting on fewer particles than a statistic needs, the excess is not decided.
      if (nums[i].primary_count < min_class_count)
        undecided = true;
      else
        outside = true;
    }
    if (nums[i].primary_fraction > 0 && nums[i].primary_count < min_class_count) {
      std::snprintf(buf, sizeof buf, "primary: %d counted particle%s, too few for statistics", nums[i].primary_count,
                    nums[i].primary_count == 1 ? "" : "s");
      r.flags.push_back(buf);
    }
    if (nums[i].secondary_count < min_class_count) {
      std::snprintf(buf, sizeof buf, "secondary: %d counted particles, too few for statistics",
                    nums[i].secondary_count);
      r.flags.push_back(buf);
    }
    if (t.secondary_mean_ecd_um && !nums[i].secondary_size_from_fit)
      r.flags.push_back("secondary size: mean of the resolved sections (the 3-D fit was not determined), biased high");
    r.verdict = outside ? Verdict::outside : (undecided ? Verdict::undecided : Verdict::inside);
    out.push_back(r);
  }
  std::stable_sort(out.begin(), out.end(), [](const Ranked& a, const Ranked& b) {
    if (a.verdict != b.verdict) return static_cast<int>(a.verdict) < static_cast<int>(b.verdict);
    return a.distance < b.distance;
  });
  return out;
}

}  // namespace orderband
