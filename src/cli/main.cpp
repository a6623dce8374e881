// orderband: the command-line program. Only wires the commands to CLI11.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <exception>
#include <functional>
#include <new>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "command.hpp"
#include "mpi_session.hpp"
#include "orderband/error.hpp"
#include "orderband/version.hpp"

namespace orderband::cli {
namespace {
const std::vector<CommandEntry>& commands() {
  static const std::vector<CommandEntry> table = {
      {"families", "plane-family table of phases at a voltage: d, Bragg angle, |F|, superlattice sensitivity",
       setup_families},
      {"check", "validate a scan description and its data; print what a run will do", setup_check},
      {"synth", "make a synthetic scan (patterns and truth) from a scenario", setup_synth},
      {"orient", "find or read and refine orientations; reconstruct grains", setup_orient},
      {"map", "the whole analysis of one scan: fraction map, precipitates, report", setup_map},
      {"screen", "compare heat-treatment trials: fractions, size classes, coarsening kinetics, ranking", setup_screen},
      {"sphere", "a phase's backscattered intensity over every direction from many-beam (Bloch-wave) dynamics",
       setup_sphere},
      {"demo", "the demo: three synthetic ageing trials mapped and screened (the quick start's main job)", setup_demo},
  };
  return table;
}

/// Messages echo values from files and options; a 10 MB value must not fill the terminal. Longer
/// than 400 characters: the start and the end, with the count left out between them.
std::string shortened(std::string what) {
  const size_t head = 250, tail = 120;
  if (what.size() <= 400) return what;
  const size_t cut = what.size() - head - tail;
  return what.substr(0, head) + " ... (" + std::to_string(cut) + " characters left out) ... " +
         what.substr(what.size() - tail);
}

/// The first argument when it is meant as a command (not an option) and names none.
/// One error line in the documented form, `orderband COMMAND: error: ...`; exit status 1.
int report_error(const CLI::App& sub, const std::string& message) {
  std::fprintf(stderr, "orderband %s: error: %s\n", sub.get_name().c_str(), shortened(message).c_str());
  return 1;
}

std::optional<std::string> unknown_command(int argc, char** argv) {
  if (argc < 2 || argv[1][0] == '-') return std::nullopt;
  for (const CommandEntry& c : commands())
    if (std::string(c.name) == argv[1]) return std::nullopt;
  return std::string(argv[1]);
}

/// Runs the parsed command: one error line in the documented form for any failure. Under an MPI
/// launch only `map` and `screen` share their work; a process that fails while the others may wait for it ends
/// them all.
int run_command(const CLI::App& sub, const std::function<int()>& run) {
  const MpiSession& session = mpi_session();
  if (session.size() > 1 && sub.get_name() != "screen" && sub.get_name() != "map") {
    if (session.rank() == 0)
      report_error(sub, "runs as one process; of the commands only `map` and `screen` share their work among the " +
                            std::to_string(session.size()) + " processes of an MPI launch");
    return 2;
  }
  int status = 0;
  try {
    return run();
  } catch (const std::bad_alloc&) {
    // The library's own text ("std::bad_alloc") tells a user nothing.
    status = report_error(sub,
                          "out of memory: the run asked for more memory than this machine can give (check the grid "
                          "and pattern sizes, or run on a larger machine)");
  } catch (const std::length_error&) {
    status =
        report_error(sub, "a size beyond what any array can hold was asked for (check the grid and pattern sizes)");
  } catch (const std::exception& e) {  // orderband::Error among them
    status = report_error(sub, e.what());
  }
  // The other processes may be waiting for this one in a collective step.
  if (session.size() > 1) session.abort(status);
  return status;
}

}  // namespace
}  // namespace orderband::cli

int main(int argc, char** argv) {
  using namespace orderband::cli;
  set_command_line(argc, argv);
  const MpiSession session(argc, argv);
  set_mpi_session(&session);
  CLI::App app{"orderband: ordered-phase (gamma-prime) fraction maps from Kikuchi patterns", "orderband"};
  app.set_version_flag("--version", std::string("orderband ") + orderband::kVersion);
  app.require_subcommand(1);
  std::vector<std::pair<CLI::App*, std::function<int()>>> runners;
  for (const CommandEntry& c : commands()) {
    CLI::App* sub = app.add_subcommand(c.name, c.description);
    runners.emplace_back(sub, c.setup(*sub));
  }
  if (const auto unknown = unknown_command(argc, argv)) {
    std::string names;
    for (const CommandEntry& c : commands()) names += (names.empty() ? "" : ", ") + std::string(c.name);
    std::fprintf(stderr, "orderband: error: unknown command '%s' (commands: %s; see --help)\n",
                 shortened(*unknown).c_str(), names.c_str());
    return 2;
  }
  try {
    app.parse(argc, argv);
  } catch (const CLI::Success& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    // One line in the documented form, naming the command the user asked for.
    std::string command;
    for (auto& [sub, run] : runners)
      if (sub->parsed()) command = " " + sub->get_name();
    std::fprintf(stderr, "orderband%s: error: %s (see --help)\n", command.c_str(), shortened(e.what()).c_str());
    return 2;
  }
  for (auto& [sub, run] : runners) {
    if (!sub->parsed()) continue;
    const int status = run_command(*sub, run);
    // Under a launch every process returns the same status (mpirun reports the first non-zero).
    return mpi_session().max_over_processes(status);
  }
  return 2;
}
