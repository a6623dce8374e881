// Progress on stderr: a bar with rate and time left on a terminal, plain lines otherwise.
#pragma once

#include <chrono>
#include <cstddef>
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

}  // namespace orderband::cli
