// Helpers shared by the commands: provenance and shared options.
#include <omp.h>

#include <cmath>
#include <cstdio>
#include <map>
#include <string>

#include "command.hpp"
#include "orderband/sphere_file.hpp"

namespace orderband::cli {
namespace {
std::string g_command_line;
}

const std::string& command_line() { return g_command_line; }

void set_command_line(int argc, char** argv) {
  g_command_line.clear();
  for (int i = 0; i < argc; ++i) {
    if (i) g_command_line += ' ';
    g_command_line += argv[i];
  }
}

void add_format_option(CLI::App& sub, TableFormat& format) {
  const std::map<std::string, TableFormat> names{
      {"text", TableFormat::text}, {"csv", TableFormat::csv}, {"json", TableFormat::json}};
  sub.add_option("--format", format, "output format: text (aligned table), csv or json")
      ->transform(CLI::CheckedTransformer(names, CLI::ignore_case))
      ->default_str("text");
}

CLI::Validator finite_within(double lo, double hi, bool open_low, bool open_high) {
  auto number = [](double v) {
    char b[32];
    std::snprintf(b, sizeof b, "%g", v);
    return std::string(b);
  };
  const std::string range =
      std::string(open_low ? "(" : "[") + number(lo) + ", " + number(hi) + (open_high ? ")" : "]");
  return CLI::Validator(
      [=](std::string& text) -> std::string {
        double v = 0;
        try {
          size_t used = 0;
          v = std::stod(text, &used);
          if (used != text.size()) return "'" + text.substr(0, 40) + "' is not a number";
        } catch (const std::exception&) {
          return "'" + text.substr(0, 40) + "' is not a number";
        }
        const bool ok = std::isfinite(v) && (open_low ? v > lo : v >= lo) && (open_high ? v < hi : v <= hi);
        return ok ? std::string() : "'" + text.substr(0, 40) + "' is outside " + range;
      },
      "NUMBER in " + range);
}

void add_threads_option(CLI::App& sub, int& threads) {
  // At most 1,024 threads: more would only cost memory (each holds its pattern buffers).
  sub.add_option("--threads", threads, "worker threads (0: all cores; at most 1024)")
      ->check(finite_within(0, 1024, false, false))
      ->default_str("0");
}

void add_sphere_cache_options(CLI::App& sub, SphereCacheOptions& cache) {
  sub.add_option("--cache", cache.dir,
                 "sphere cache folder (default $XDG_CACHE_HOME/orderband/spheres or ~/.cache/orderband/spheres)");
  sub.add_flag("--no-cache", cache.off, "neither read nor write the sphere cache");
}

std::string SphereCacheOptions::folder() const {
  if (off) return "";
  return dir.empty() ? default_sphere_cache_folder() : dir;
}

void apply_threads(int threads) {
  if (threads > 0) omp_set_num_threads(threads);
}

}  // namespace orderband::cli
