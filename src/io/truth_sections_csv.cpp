// Reading a synthetic scan's truth_particles.csv.
#include <sstream>

#include "orderband/error.hpp"
#include "orderband/text_file.hpp"
#include "orderband/truth_comparison.hpp"

namespace orderband {

std::vector<TruthSection> read_truth_sections(const std::string& path) {
  std::istringstream in(read_text_file(path, "truth particles"));
  std::string line;
  std::vector<std::string> header;
  std::vector<TruthSection> out;
  auto split = [](const std::string& s) {
    std::vector<std::string> f;
    std::stringstream ss(s);
    for (std::string x; std::getline(ss, x, ',');) f.push_back(x);
    return f;
  };
  auto column = [&](const char* name) {
    for (size_t k = 0; k < header.size(); ++k)
      if (header[k] == name) return k;
    fail(path, ": no column '", name, "'");
  };
  size_t c_class = 0, c_x = 0, c_y = 0, c_d3 = 0, c_sec = 0;
  int line_no = 0;
  while (std::getline(in, line)) {
    ++line_no;
    if (line.empty() || line[0] == '#') continue;
    if (header.empty()) {
      header = split(line);
      c_class = column("class"), c_x = column("x_um"), c_y = column("y_um");
      c_d3 = column("diameter_3d_um"), c_sec = column("section_ecd_um");
      continue;
    }
    const std::vector<std::string> f = split(line);
    if (f.size() != header.size()) fail(path, ":", line_no, ": ", f.size(), " fields, the header has ", header.size());
    try {
      TruthSection t{f[c_class], std::stod(f[c_x]), std::stod(f[c_y]), std::stod(f[c_d3]), std::stod(f[c_sec])};
      if (t.section_ecd_um > 0) out.push_back(t);
    } catch (const std::exception&) {
      fail(path, ":", line_no, ": a field is not a number");
    }
  }
  if (header.empty()) fail(path, ": no header line");
  return out;
}

}  // namespace orderband
