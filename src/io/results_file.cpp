// A map's results for other tools: .npy files, float TIFFs and one HDF5 file.
#include "orderband/results_file.hpp"

#include <hdf5.h>

#include <cmath>
#include <cstdlib>
#include <memory>
#include <sstream>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/image_io.hpp"
#include "orderband/npy_io.hpp"

namespace orderband {
namespace {

/// An HDF5 identifier closed by its own close function when it goes out of scope.
class H5Handle {
 public:
  H5Handle(hid_t id, herr_t (*close)(hid_t), const std::string& what) : id_(id), close_(close) {
    if (id_ < 0) fail("HDF5: cannot create ", what);
  }
  ~H5Handle() {
    if (id_ >= 0) close_(id_);
  }
  H5Handle(H5Handle&& other) noexcept : id_(other.id_), close_(other.close_) { other.id_ = -1; }
  H5Handle(const H5Handle&) = delete;
  H5Handle& operator=(const H5Handle&) = delete;
  operator hid_t() const { return id_; }

 private:
  hid_t id_;
  herr_t (*close_)(hid_t);
};

/// Creation properties without modification times, so that the same results give the same bytes.
H5Handle untimed(hid_t property_class) {
  H5Handle p(H5Pcreate(property_class), H5Pclose, "a property list");
  H5Pset_obj_track_times(p, false);
  return p;
}

H5Handle utf8_string_type() {
  H5Handle t(H5Tcopy(H5T_C_S1), H5Tclose, "a string type");
  H5Tset_size(t, H5T_VARIABLE);
  H5Tset_cset(t, H5T_CSET_UTF8);
  return t;
}

void string_attribute(hid_t object, const char* name, const std::string& value) {
  const H5Handle type = utf8_string_type();
  const H5Handle space(H5Screate(H5S_SCALAR), H5Sclose, "a scalar space");
  const H5Handle attr(H5Acreate2(object, name, type, space, H5P_DEFAULT, H5P_DEFAULT), H5Aclose,
                      std::string("attribute ") + name);
  const char* p = value.c_str();
  if (H5Awrite(attr, type, &p) < 0) fail("HDF5: cannot write attribute ", name);
}

void int_attribute(hid_t object, const char* name, int value) {
  const H5Handle space(H5Screate(H5S_SCALAR), H5Sclose, "a scalar space");
  const H5Handle attr(H5Acreate2(object, name, H5T_STD_I32LE, space, H5P_DEFAULT, H5P_DEFAULT), H5Aclose,
                      std::string("attribute ") + name);
  if (H5Awrite(attr, H5T_NATIVE_INT, &value) < 0) fail("HDF5: cannot write attribute ", name);
}

void write_map(hid_t group, int rows, int cols, const PointArray& a) {
  const hsize_t dims[2] = {static_cast<hsize_t>(rows), static_cast<hsize_t>(cols)};
  const H5Handle space(H5Screate_simple(2, dims, nullptr), H5Sclose, "a map space");
  const bool f = a.is_float();
  const H5Handle set(H5Dcreate2(group, a.name.c_str(), f ? H5T_IEEE_F32LE : H5T_STD_I32LE, space, H5P_DEFAULT,
                                untimed(H5P_DATASET_CREATE), H5P_DEFAULT),
                     H5Dclose, "dataset " + a.name);
  const herr_t status = f ? H5Dwrite(set, H5T_NATIVE_FLOAT, H5S_ALL, H5S_ALL, H5P_DEFAULT, a.f32.data())
                          : H5Dwrite(set, H5T_NATIVE_INT32, H5S_ALL, H5S_ALL, H5P_DEFAULT, a.i32.data());
  if (status < 0) fail("HDF5: cannot write dataset ", a.name);
  string_attribute(set, "unit", a.unit);
  string_attribute(set, "description", a.description);
}

/// The CSV's header and rows (comment lines skipped; cells split at commas, no quoting is used).
std::vector<std::vector<std::string>> csv_rows(const std::string& csv) {
  std::vector<std::vector<std::string>> rows;
  std::istringstream in(csv);
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::vector<std::string> cells;
    size_t start = 0;
    for (size_t comma; (comma = line.find(',', start)) != std::string::npos; start = comma + 1)
      cells.push_back(line.substr(start, comma - start));
    cells.push_back(line.substr(start));
    rows.push_back(std::move(cells));
  }
  return rows;
}

bool parse_number(const std::string& cell, double& out) {
  if (cell.empty()) {
    out = std::nan("");
    return true;
  }
  char* end = nullptr;
  out = std::strtod(cell.c_str(), &end);
  return end == cell.c_str() + cell.size();
}

void write_column(hid_t group, const std::string& name, const std::vector<std::string>& cells) {
  const hsize_t n = cells.size();
  const H5Handle space(H5Screate_simple(1, &n, nullptr), H5Sclose, "a column space");
  std::vector<double> numbers(cells.size());
  bool numeric = true;
  for (size_t i = 0; i < cells.size() && numeric; ++i) numeric = parse_number(cells[i], numbers[i]);
  if (numeric) {
    const H5Handle set(
        H5Dcreate2(group, name.c_str(), H5T_IEEE_F64LE, space, H5P_DEFAULT, untimed(H5P_DATASET_CREATE), H5P_DEFAULT),
        H5Dclose, "column " + name);
    if (H5Dwrite(set, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, numbers.data()) < 0)
      fail("HDF5: cannot write column ", name);
    return;
  }
  const H5Handle type = utf8_string_type();
  const H5Handle set(
      H5Dcreate2(group, name.c_str(), type, space, H5P_DEFAULT, untimed(H5P_DATASET_CREATE), H5P_DEFAULT), H5Dclose,
      "column " + name);
  std::vector<const char*> p;
  for (const std::string& c : cells) p.push_back(c.c_str());
  if (H5Dwrite(set, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, p.data()) < 0) fail("HDF5: cannot write column ", name);
}

void write_table(hid_t tables, const CsvTable& t) {
  const auto rows = csv_rows(t.csv);
  if (rows.empty()) fail("table ", t.name, " has no header");
  const H5Handle group(H5Gcreate2(tables, t.name.c_str(), H5P_DEFAULT, untimed(H5P_GROUP_CREATE), H5P_DEFAULT),
                       H5Gclose, "group " + t.name);
  const std::vector<std::string>& header = rows[0];
  for (size_t c = 0; c < header.size(); ++c) {
    std::vector<std::string> cells;
    for (size_t r = 1; r < rows.size(); ++r) {
      if (rows[r].size() != header.size())
        fail("table ", t.name, ": row ", r, " has ", rows[r].size(), " cells, the header ", header.size());
      cells.push_back(rows[r][c]);
    }
    write_column(group, header[c], cells);
  }
}

}  // namespace

void write_point_arrays_npy(const std::string& folder, int rows, int cols, const std::vector<PointArray>& arrays) {
  for (const PointArray& a : arrays) {
    const std::string path = folder + "/" + a.name + ".npy";
    if (a.is_float())
      write_npy_float32(path, rows, cols, a.f32);
    else
      write_npy_int32(path, rows, cols, a.i32);
  }
}

void write_point_arrays_tiff(const std::string& folder, int rows, int cols, const std::vector<PointArray>& arrays) {
  for (const PointArray& a : arrays)
    if (a.is_float()) write_tiff_float32(folder + "/" + a.name + ".tif", cols, rows, a.f32);
}

void write_results_h5(const std::string& path, int rows, int cols, const std::vector<PointArray>& arrays,
                      const std::vector<CsvTable>& tables, const std::string& summary_json,
                      const std::string& provenance) {
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  write_atomically(path, [&](const std::string& temp) {
    const H5Handle file(H5Fcreate(temp.c_str(), H5F_ACC_TRUNC, untimed(H5P_FILE_CREATE), H5P_DEFAULT), H5Fclose,
                        "'" + temp + "'");
    string_attribute(file, "tool", "orderband");
    string_attribute(file, "version_line", provenance);
    int_attribute(file, "rows", rows);
    int_attribute(file, "cols", cols);
    {
      const H5Handle maps(H5Gcreate2(file, "maps", H5P_DEFAULT, untimed(H5P_GROUP_CREATE), H5P_DEFAULT), H5Gclose,
                          "group maps");
      for (const PointArray& a : arrays) {
        if ((a.is_float() ? a.f32.size() : a.i32.size()) != static_cast<size_t>(rows) * cols)
          fail("map ", a.name, " does not have ", rows, " x ", cols, " values");
        write_map(maps, rows, cols, a);
      }
    }
    {
      const H5Handle group(H5Gcreate2(file, "tables", H5P_DEFAULT, untimed(H5P_GROUP_CREATE), H5P_DEFAULT), H5Gclose,
                           "group tables");
      for (const CsvTable& t : tables) write_table(group, t);
    }
    {
      const H5Handle type = utf8_string_type();
      const H5Handle space(H5Screate(H5S_SCALAR), H5Sclose, "a scalar space");
      const H5Handle set(
          H5Dcreate2(file, "summary_json", type, space, H5P_DEFAULT, untimed(H5P_DATASET_CREATE), H5P_DEFAULT),
          H5Dclose, "dataset summary_json");
      const char* p = summary_json.c_str();
      if (H5Dwrite(set, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, &p) < 0) fail("HDF5: cannot write the summary");
    }
    if (H5Fflush(file, H5F_SCOPE_GLOBAL) < 0) fail("HDF5: cannot write '", path, "'");
  });
}

}  // namespace orderband
