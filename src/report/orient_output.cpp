// Orientation stage outputs.
#include "orderband/orient_output.hpp"

#include <filesystem>
#include <nlohmann/json.hpp>
#include <sstream>

#include "orderband/atomic_file.hpp"
#include "orderband/error.hpp"
#include "orderband/map_image.hpp"
#include "orderband/npy_io.hpp"
#include "orderband/orientation_csv.hpp"
#include "orderband/version.hpp"

namespace orderband {

namespace {
/// The orientation maps' size: about 600 image pixels along the longer side.
constexpr double kOrientMapSidePx = 600;
}  // namespace

RgbImage orientation_map_image(const ScanGrid& grid, const OrientationResults& r) {
  const MapCanvas canvas(grid, pixels_per_step(grid, kOrientMapSidePx));
  std::vector<Colour> colours(grid.count(), Colour{255, 255, 255});
  for (size_t k = 0; k < grid.count(); ++k)
    if (r.orientation[k]) colours[k] = ipf_colour(*r.orientation[k], Eigen::Vector3d(0, 0, 1));
  return side_by_side(with_scale_bar(draw_point_colours(canvas, colours), canvas.pixels_per_um), ipf_key(140));
}

std::vector<PointArray> orientation_arrays(const OrientationResults& r) {
  std::vector<PointArray> a;
  a.push_back({"point_status",
               "",
               "orientation stage per point: 0 ok, 1 unusable pattern, 2 too few bands, 3 fit failed, 4 missing in "
               "the orientation file",
               {},
               std::vector<int32_t>(r.status.begin(), r.status.end())});
  a.push_back({"grain_ids", "", "grain of the point (1, 2, ...; 0: none)", {}, r.grains.id});
  a.push_back({"bands_matched",
               "",
               "bands matched by the found orientation (-1: not indexed)",
               {},
               std::vector<int32_t>(r.bands_matched.begin(), r.bands_matched.end())});
  a.push_back({"fit_residual_deg", "deg", "indexing residual (NaN where not indexed)", r.fit_residual_deg, {}});
  a.push_back({"model_correlation",
               "1",
               "correlation of the pattern with the model at the refined orientation",
               r.correlation,
               {}});
  a.push_back({"kam_deg", "deg", "kernel average misorientation to the neighbours of the same grain", r.kam_deg, {}});
  return a;
}

void write_orientation_outputs(const std::string& folder, const ScanConfig& config, const OrientationResults& r,
                               const OrientSpec& spec, const std::vector<std::string>& phases,
                               const std::string& command_line) {
  std::error_code ec;
  std::filesystem::create_directories(folder, ec);
  if (ec) fail("cannot create output folder '", folder, "': ", ec.message());
  const ScanGrid& grid = config.grid;
  const std::string provenance = std::string("orderband ") + kVersion + ": " + command_line;
  {
    OrientationTable t;
    t.orientations = r.orientation;
    if (phases.size() != grid.count())
      fail("orientation outputs: ", phases.size(), " phases for ", grid.count(), " points");
    for (size_t k = 0; k < grid.count(); ++k) t.phases.push_back(r.orientation[k] ? phases[k] : "");
    std::ostringstream os;
    write_orientation_csv(os, grid, t, provenance);
    write_text_atomically(folder + "/orientations.csv", os.str());
  }
  write_point_arrays_npy(folder, grid.rows, grid.cols, orientation_arrays(r));

  const std::vector<std::pair<std::string, std::string>> text{{"Software", provenance}};
  write_png_rgb(folder + "/orientation_map.png", orientation_map_image(grid, r), text);
  const MapCanvas canvas(grid, pixels_per_step(grid, kOrientMapSidePx));
  std::vector<Colour> grain_colours(grid.count());
  for (size_t k = 0; k < grid.count(); ++k) grain_colours[k] = label_colour(r.grains.id[k]);
  write_png_rgb(folder + "/grain_map.png",
                with_scale_bar(draw_point_colours(canvas, grain_colours), canvas.pixels_per_um), text);

  nlohmann::json j;
  j["tool"] = "orderband";
  j["version"] = kVersion;
  j["command_line"] = command_line;
  j["scan"] = config.path;
  j["points"] = grid.count();
  j["usable_points"] = r.usable();
  j["points_with_orientation"] = r.with_orientation();
  nlohmann::json by_status;
  for (int s = 0; s <= 4; ++s)
    by_status[point_status_name(static_cast<PointStatus>(s))] =
        std::count(r.status.begin(), r.status.end(), static_cast<uint8_t>(s));
  j["points_by_status"] = by_status;
  j["grain_count"] = r.grains.count();
  nlohmann::json grains = nlohmann::json::array();
  for (int g = 0; g < r.grains.count(); ++g) {
    const Eigen::Vector3d e = r.grains.mean[g].bunge() * 180 / M_PI;
    grains.push_back({{"id", g + 1}, {"points", r.grains.size[g]}, {"mean_euler_deg", {e[0], e[1], e[2]}}});
  }
  j["grains"] = grains;
  j["grain_checks"] = {{"pseudo_symmetric_grains", r.pseudo_symmetric_grains},
                       {"pseudo_symmetric_points", r.pseudo_symmetric_points},
                       {"points_joined_to_grain", r.points_joined_to_grain},
                       {"points_from_neighbours", r.points_from_neighbours}};
  j["parameters"] = {{"orientation_source", name_of(config.orientations.source)},
                     {"refine", config.orientations.refine},
                     {"grain_threshold_deg", spec.grains.threshold_deg},
                     {"orientations_from_row_above", spec.from_neighbours},
                     {"row_above_correlation_margin", spec.neighbour_margin},
                     {"grain_min_points", spec.grains.min_points},
                     {"grain_split_bimodal", spec.grains.split_bimodal},
                     {"index_angle_tolerance_deg", spec.index.angle_tolerance_deg},
                     {"max_bands", spec.detect.max_bands},
                     {"candidates", spec.candidates},
                     {"min_correlation", spec.min_correlation},
                     {"pseudo_symmetry_samples", spec.pseudo_symmetry_samples},
                     {"pseudo_symmetry_candidates", spec.pseudo_symmetry_candidates},
                     {"pseudo_symmetry_gain", spec.pseudo_symmetry_gain},
                     {"refine_max_iterations", spec.refine.max_iterations}};
  j["status_codes"] = {
      {"0", "ok"}, {"1", "unusable_pattern"}, {"2", "too_few_bands"}, {"3", "fit_failed"}, {"4", "missing_in_file"}};
  write_text_atomically(folder + "/orient_summary.json", j.dump(2) + "\n");
}

}  // namespace orderband
