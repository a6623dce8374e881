// Counting a synthetic scan's true sections the way map counts measured ones.
#include "orderband/truth_comparison.hpp"

#include <cmath>
#include <map>

namespace orderband {

std::vector<TruthClassCount> count_truth_sections(const std::vector<TruthSection>& truth, const ScanGrid& grid,
                                                  double limit) {
  const double dx = grid.step_um, dy = grid.row_spacing_um();
  // The field as map sees it: every point's cell; a section reaching a border point's cell is cut.
  const double x0 = -0.5 * dx, x1 = grid.field_width_um() - 0.5 * dx;
  const double y0 = -0.5 * dy, y1 = grid.field_height_um() - 0.5 * dy;
  const double area = (x1 - x0) * (y1 - y0);
  std::map<std::string, TruthClassCount> by_class;
  for (const TruthSection& t : truth) {
    if (!(t.section_ecd_um > 0)) continue;
    if (t.x_um < x0 || t.x_um >= x1 || t.y_um < y0 || t.y_um >= y1) continue;
    TruthClassCount& c = by_class[t.size_class];
    c.name = t.size_class;
    c.area_fraction += M_PI / 4 * t.section_ecd_um * t.section_ecd_um / area;
    const double r = 0.5 * t.section_ecd_um;
    const bool at_border = t.x_um - r < x0 + dx || t.x_um + r > x1 - dx || t.y_um - r < y0 + dy || t.y_um + r > y1 - dy;
    if (at_border) continue;
    c.count_all += 1, c.mean_ecd_all_um += t.section_ecd_um;
    if (t.section_ecd_um >= limit) c.count_resolved += 1, c.mean_ecd_resolved_um += t.section_ecd_um;
  }
  std::vector<TruthClassCount> out;
  for (auto& [name, c] : by_class) {
    if (c.count_all) c.mean_ecd_all_um /= c.count_all;
    if (c.count_resolved) c.mean_ecd_resolved_um /= c.count_resolved;
    c.density_all_per_um2 = c.count_all / area;
    c.density_resolved_per_um2 = c.count_resolved / area;
    out.push_back(c);
  }
  return out;
}

}  // namespace orderband
