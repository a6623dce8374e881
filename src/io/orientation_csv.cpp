// Orientation CSV reading and writing.
#include "orderband/orientation_csv.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/units.hpp"

namespace orderband {

void write_orientation_csv(std::ostream& os, const ScanGrid& grid, const OrientationTable& t,
                           const std::string& provenance) {
  if (t.orientations.size() != grid.count())
    fail("orientation table has ", t.orientations.size(), " points, grid ", grid.count());
  if (!provenance.empty()) os << "# " << provenance << "\n";
  os << "row,col,phi1_deg,Phi_deg,phi2_deg,phase\n";
  char buf[160];
  for (size_t k = 0; k < grid.count(); ++k) {
    const GridPoint p = grid.point(k);
    const std::string phase = k < t.phases.size() ? t.phases[k] : "";
    if (t.orientations[k]) {
      const Eigen::Vector3d e = t.orientations[k]->bunge();
      std::snprintf(buf, sizeof buf, "%d,%d,%.10f,%.10f,%.10f,", p.row, p.col, rad_to_deg(e[0]), rad_to_deg(e[1]),
                    rad_to_deg(e[2]));
    } else {
      std::snprintf(buf, sizeof buf, "%d,%d,,,,", p.row, p.col);
    }
    os << buf << phase << "\n";
  }
}

OrientationTable read_orientation_csv(std::istream& is, const ScanGrid& grid, const std::string& origin) {
  OrientationTable t;
  std::string line;
  size_t line_no = 0;
  bool header = false;
  double largest[3] = {0, 0, 0};
  size_t given = 0;
  while (std::getline(is, line)) {
    ++line_no;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (line.empty() || line[0] == '#') continue;
    std::vector<std::string> f;
    std::stringstream ss(line);
    for (std::string item; std::getline(ss, item, ',');) f.push_back(item);
    if (!line.empty() && line.back() == ',') f.push_back("");
    if (!header) {
      if (f.size() < 5 || f[0] != "row" || f[1] != "col" || f[2] != "phi1_deg" || f[3] != "Phi_deg" ||
          f[4] != "phi2_deg")
        fail(origin, ":", line_no, ": header must be row,col,phi1_deg,Phi_deg,phi2_deg[,phase], got '", line, "'");
      header = true;
      continue;
    }
    const size_t k = t.orientations.size();
    if (k >= grid.count()) fail(origin, ":", line_no, ": more lines than the ", grid.count(), " scan points");
    if (f.size() < 5) fail(origin, ":", line_no, ": expected at least 5 fields, got ", f.size());
    const GridPoint want = grid.point(k);
    int row = 0, col = 0;
    // Whole integers only ("0.5" or "1e3" are not a row).
    auto integer = [&](const std::string& text, int& out) {
      try {
        size_t used = 0;
        out = std::stoi(text, &used);
        return used == text.size();
      } catch (...) {
        return false;
      }
    };
    if (!integer(f[0], row) || !integer(f[1], col))
      fail(origin, ":", line_no, ": row and col must be integers, got '", f[0].substr(0, 40), "', '",
           f[1].substr(0, 40), "'");
    if (row != want.row || col != want.col)
      fail(origin, ":", line_no, ": expected row ", want.row, ", col ", want.col, " (points in scan order), got ", row,
           ", ", col);
    if (f[2].empty() && f[3].empty() && f[4].empty()) {
      t.orientations.push_back(std::nullopt);
    } else {
      double e[3];
      for (int i = 0; i < 3; ++i) {
        char* end = nullptr;
        e[i] = std::strtod(f[2 + i].c_str(), &end);
        if (f[2 + i].empty() || *end || !std::isfinite(e[i]))
          fail(origin, ":", line_no, ": angle '", f[2 + i], "' is not a number of degrees");
      }
      if (std::abs(e[0]) > 360 || std::abs(e[2]) > 360 || e[1] < 0 || e[1] > 180)
        fail(origin, ":", line_no, ": Euler angles (", e[0], ", ", e[1], ", ", e[2],
             ") deg out of range (phi1, phi2 within ±360, Phi within [0, 180]); are they in radians?");
      t.orientations.push_back(Rotation::from_bunge(deg_to_rad(e[0]), deg_to_rad(e[1]), deg_to_rad(e[2])));
      for (int i = 0; i < 3; ++i) largest[i] = std::max(largest[i], std::abs(e[i]));
      ++given;
    }
    t.phases.push_back(f.size() > 5 ? f[5] : "");
  }
  if (!header) fail(origin, ": no header line row,col,phi1_deg,Phi_deg,phi2_deg[,phase]");
  // Radians pass the range check; a table whose every φ1 and φ2 lies within 2π and Φ within π,
  // with angles beyond 1 (not a crystal at the Euler origin), is in radians: in degrees that would be
  // every orientation within 6.3° of (0, 0, 0).
  if (given >= 10 && largest[0] <= 2 * M_PI + 1e-6 && largest[2] <= 2 * M_PI + 1e-6 && largest[1] <= M_PI + 1e-6 &&
      std::max(largest[0], largest[2]) > 1.0)
    fail(origin, ": every angle lies within 2π (largest φ1 ", largest[0], ", Φ ", largest[1], ", φ2 ", largest[2],
         "): the angles look like radians; the table needs degrees (multiply by 180/π)");
  if (t.orientations.size() != grid.count())
    fail(origin, ": ", t.orientations.size(), " orientations for ", grid.count(), " scan points (", grid.rows, " x ",
         grid.cols, ")");
  return t;
}

}  // namespace orderband
