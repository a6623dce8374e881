// The interface every command file implements, and helpers shared by the commands.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <string>

namespace orderband::cli {

/// A command registers its options on its CLI11 subcommand and returns the
/// function that runs it (returning the process exit code).
using CommandSetup = std::function<std::function<int()>(CLI::App& sub)>;

struct CommandEntry {
  const char* name;
  const char* description;
  CommandSetup setup;
};

std::function<int()> setup_families(CLI::App& sub);
std::function<int()> setup_check(CLI::App& sub);
std::function<int()> setup_synth(CLI::App& sub);
std::function<int()> setup_orient(CLI::App& sub);
std::function<int()> setup_map(CLI::App& sub);
std::function<int()> setup_screen(CLI::App& sub);
std::function<int()> setup_demo(CLI::App& sub);
std::function<int()> setup_sphere(CLI::App& sub);

/// The full command line, for provenance in every output.
const std::string& command_line();
void set_command_line(int argc, char** argv);

/// Output format option shared by the commands that print tables.
enum class TableFormat { text, csv, json };
void add_format_option(CLI::App& sub, TableFormat& format);

/// `--threads N` (0: all cores), shared by the commands that compute.
void add_threads_option(CLI::App& sub, int& threads);
/// A validator for a finite number inside [lo, hi] (open ends as asked): NaN, infinities and text
/// are rejected with one line that names the range.
CLI::Validator finite_within(double lo, double hi, bool open_low, bool open_high);
/// `--cache DIR` and `--no-cache` for the commands that use many-beam spheres.
struct SphereCacheOptions {
  std::string dir;
  bool off = false;
  /// The folder to read and write spheres in: DIR, else the default folder; empty with --no-cache.
  std::string folder() const;
};
void add_sphere_cache_options(CLI::App& sub, SphereCacheOptions& cache);
/// Sets the OpenMP thread count (0 leaves the default: all cores).
void apply_threads(int threads);

}  // namespace orderband::cli
