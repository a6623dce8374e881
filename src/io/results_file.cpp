// A map's results for other tools: .npy files, float TIFFs and one HDF5 file.
#include "orderband/results_file.hpp"

#include <hdf5.h>

#include <cmath>
#include <cstdlib>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

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
/// The cells of a CSV text (empty and comment lines skipped) as views into it, row after row; every
/// row has the header's cell count. Views, not strings: the points table has a row per point, and
/// strings of its cells held about 600 bytes per point.
struct CsvCells {
  std::vector<std::string_view> cells;
  size_t columns = 0;
  size_t rows() const { return columns ? cells.size() / columns : 0; }  ///< the header included
};

CsvCells csv_cells(const std::string& csv, const std::string& table) {
  CsvCells out;
  const std::string_view text(csv);
  size_t row = 0;
  for (size_t start = 0; start < text.size();) {
    size_t end = text.find('\n', start);
    if (end == std::string_view::npos) end = text.size();
    const std::string_view line = text.substr(start, end - start);
    start = end + 1;
    if (line.empty() || line[0] == '#') continue;
    size_t cells = 0, from = 0;
    for (size_t comma; (comma = line.find(',', from)) != std::string_view::npos; from = comma + 1, ++cells)
      out.cells.push_back(line.substr(from, comma - from));
    out.cells.push_back(line.substr(from));
    ++cells;
    if (row == 0) out.columns = cells;
    if (cells != out.columns) fail("table ", table, ": row ", row, " has ", cells, " cells, the header ", out.columns);
    ++row;
  }
  if (row == 0) fail("table ", table, " has no header");
  return out;
}

/// A cell as a number (empty: NaN); false if it is not one. The cell lies inside the CSV text,
/// followed by a comma, a line end or the text's end, where strtod stops.
bool parse_number(std::string_view cell, double& out) {
  if (cell.empty()) {
    out = std::nan("");
    return true;
  }
  char* end = nullptr;
  out = std::strtod(cell.data(), &end);
  return end == cell.data() + cell.size();
}

/// Column `c` of the table as one dataset: float64 where every cell is a number, else UTF-8 strings.
void write_column(hid_t group, const CsvCells& t, size_t c) {
  const std::string name(t.cells[c]);
  const size_t rows = t.rows() - 1;
  auto cell = [&](size_t r) { return t.cells[(r + 1) * t.columns + c]; };
  const hsize_t n = rows;
  const H5Handle space(H5Screate_simple(1, &n, nullptr), H5Sclose, "a column space");
  std::vector<double> numbers(rows);
  bool numeric = true;
  for (size_t r = 0; r < rows && numeric; ++r) numeric = parse_number(cell(r), numbers[r]);
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
  std::vector<std::string> strings;
  for (size_t r = 0; r < rows; ++r) strings.emplace_back(cell(r));
  std::vector<const char*> p;
  for (const std::string& v : strings) p.push_back(v.c_str());
  if (H5Dwrite(set, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, p.data()) < 0) fail("HDF5: cannot write column ", name);
}

void write_table(hid_t tables, const CsvTable& t) {
  const CsvCells cells = csv_cells(t.csv, t.name);
  const H5Handle group(H5Gcreate2(tables, t.name.c_str(), H5P_DEFAULT, untimed(H5P_GROUP_CREATE), H5P_DEFAULT),
                       H5Gclose, "group " + t.name);
  for (size_t c = 0; c < cells.columns; ++c) write_column(group, cells, c);
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
