// Helpers shared by the commands: provenance and shared options.
#include <omp.h>

#include <map>

#include "command.hpp"

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

void add_threads_option(CLI::App& sub, int& threads) {
  sub.add_option("--threads", threads, "worker threads (0: all cores)")
      ->check(CLI::NonNegativeNumber)
      ->default_str("0");
}

void apply_threads(int threads) {
  if (threads > 0) omp_set_num_threads(threads);
}

}  // namespace orderband::cli
