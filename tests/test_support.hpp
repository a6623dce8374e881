// Helpers shared by the test files: paths to shipped data and running the program.
#pragma once

#include <array>
#include <cstdio>
#include <string>

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

/// A fresh empty temporary folder, removed by the caller.
std::string make_temp_dir(const std::string& stem);

/// A small synthetic scan in `dir`/scan (side × side points of 48 × 48 px, 5,000 counts, two grains,
/// 30 % secondary particles of median 0.12 µm, 30 nm steps); returns its scan.toml. `variant`: more
/// keys of the scenario's [patterns] table, optionally followed by other tables (such as [renderer]).
std::string write_small_scan(const std::string& dir, int side, int seed, const std::string& variant = "");

}  // namespace orderband::test
