// Progress on stderr: a bar with rate and time left on a terminal, plain lines otherwise.
#pragma once

#include <chrono>
#include <cstddef>
#include <memory>
#include <string>

namespace orderband::cli {

class ProgressReporter {
 public:
  ProgressReporter(std::string label, std::string unit, bool quiet);
  /// Report progress; cheap to call often (redraws at most ~5 times a second;
  /// plain lines at every 10 %).
  void operator()(size_t done, size_t total);
  void finish();

 private:
  std::string label_, unit_;
  bool quiet_, tty_;
  std::chrono::steady_clock::time_point start_, last_;
  int last_decile_ = -1;
  bool drawn_ = false;
};

/// One bar per stage of a multi-stage run: a new bar whenever the stage's name changes.
class StageBars {
 public:
  StageBars(std::string unit, bool quiet) : unit_(std::move(unit)), quiet_(quiet) {}
  void operator()(const std::string& stage, size_t done, size_t total);
  /// Ends the current bar (a new stage, or a line printed between bars).
  void finish();

 private:
  std::string unit_, current_;
  bool quiet_;
  std::unique_ptr<ProgressReporter> bar_;
};

}  // namespace orderband::cli
