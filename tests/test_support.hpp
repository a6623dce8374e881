// Helpers shared by the test files: paths to shipped data and running the program.
#pragma once

#include <array>
#include <cstdio>
#include <functional>
#include <string>

#include "orderband/detector_geometry.hpp"

namespace orderband::test {

/// A whole file's bytes (empty if it cannot be read).
std::string read_file_bytes(const std::string& path);

inline std::string crystal_data(const std::string& file) { return std::string(ORDERBAND_TEST_DATA_DIR) + "/" + file; }

struct RunResult {
  int exit_code = -1;
  std::string out;  ///< stdout
  std::string err;  ///< stderr
};

/// Runs a shell command, capturing its exit code, stdout and stderr.
RunResult run_command(const std::string& command);

/// Runs the orderband program with `args` (a shell-quoted string).
RunResult run_orderband(const std::string& args);

/// Runs a python reference script through Debian's /usr/bin/python3.
RunResult run_reference_script(const std::string& script, const std::string& args);

/// How a run started by interrupt_after_rows ended.
struct InterruptedRun {
  bool exited = false;   ///< it ended by itself before the rows were committed
  bool stopped = false;  ///< `stop` was called
  int status = 0;        ///< its wait status
};

/// Starts `command` (a program and its arguments, run by the shell's exec so that the pid is the
/// program's: put variables in front with `env`; output discarded) in the background, polls `folder`
/// every 10 ms and calls stop(pid) once `rows` row files of `stage` are committed there; a run still
/// going after `minutes` is killed. Waits for the run to end.
InterruptedRun interrupt_after_rows(const std::string& command, const std::string& folder, const std::string& stage,
                                    int rows, const std::function<bool(int pid)>& stop, int minutes = 10);

/// A fresh empty temporary folder, removed by the caller.
std::string make_temp_dir(const std::string& stem);

/// A small synthetic scan in `dir`/scan (side × side points of 48 × 48 px, 5,000 counts, two grains,
/// 30 % secondary particles of median 0.12 µm, 30 nm steps); returns its scan.toml. `variant`: more
/// keys of the scenario's [patterns] table, optionally followed by other tables (such as [renderer]).
std::string write_small_scan(const std::string& dir, int side, int seed, const std::string& variant = "");

/// A square screen of `px` pixels, pattern centre at (px/2, 0.3 px), distance 0.75 px: the geometry
/// of the profile tests.
inline DetectorGeometry square_screen(int px = 80) {
  DetectorGeometrySpec s;
  s.width_px = s.height_px = px;
  s.pc_px = {px / 2.0, 0.3 * px};
  s.distance_px = 0.75 * px;
  return DetectorGeometry(s);
}

}  // namespace orderband::test
