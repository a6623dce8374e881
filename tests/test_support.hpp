// Helpers shared by the test files: paths to shipped data and running the program.
#pragma once

#include <array>
#include <cstdio>
#include <string>

namespace orderband::test {

inline std::string crystal_data(const std::string& file) { return std::string(ORDERBAND_TEST_DATA_DIR) + "/" + file; }

struct RunResult {
  int exit_code = -1;
  std::string out;  ///< stdout
  std::string err;  ///< stderr
};

/// Runs the orderband program with `args` (a shell-quoted string).
RunResult run_orderband(const std::string& args);

/// Runs a python reference script through Debian's /usr/bin/python3.
RunResult run_reference_script(const std::string& script, const std::string& args);

/// A fresh empty temporary folder, removed by the caller.
std::string make_temp_dir(const std::string& stem);

}  // namespace orderband::test
