// Progress reporting on stderr.
#include "progress.hpp"

#include <unistd.h>

#include <cstdio>

namespace orderband::cli {

ProgressReporter::ProgressReporter(std::string label, std::string unit, bool quiet)
    : label_(std::move(label)), unit_(std::move(unit)), quiet_(quiet), tty_(::isatty(STDERR_FILENO) != 0) {
  start_ = last_ = std::chrono::steady_clock::now();
}

void ProgressReporter::operator()(size_t done, size_t total) {
  if (quiet_ || total == 0) return;
  const auto now = std::chrono::steady_clock::now();
  const double elapsed = std::chrono::duration<double>(now - start_).count();
  const double rate = elapsed > 0.05 ? done / elapsed : 0;  // too early for a meaningful rate
  const double left = rate > 0 ? (total - done) / rate : 0;
  if (tty_) {
    if (done < total && std::chrono::duration<double>(now - last_).count() < 0.2) return;
    last_ = now;
    const int width = 30, filled = static_cast<int>(width * double(done) / total);
    std::fprintf(stderr, "\r%s [%.*s%*s] %zu/%zu %s, %.0f %s/s, %.0f s left ", label_.c_str(), filled,
                 "##############################", width - filled, "", done, total, unit_.c_str(), rate, unit_.c_str(),
                 left);
    drawn_ = true;
  } else {
    const int decile = static_cast<int>(10.0 * done / total);
    if (decile == last_decile_) return;
    last_decile_ = decile;
    std::fprintf(stderr, "%s: %zu/%zu %s (%d%%), %.0f %s/s, %.0f s left\n", label_.c_str(), done, total, unit_.c_str(),
                 10 * decile, rate, unit_.c_str(), left);
  }
  std::fflush(stderr);
}

void ProgressReporter::finish() {
  if (quiet_) return;
  if (tty_ && drawn_) std::fprintf(stderr, "\n");
  const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  std::fprintf(stderr, "%s: done in %.1f s\n", label_.c_str(), elapsed);
}

void StageBars::operator()(const std::string& stage, size_t done, size_t total) {
  if (!bar_ || stage != current_) {
    finish();
    current_ = stage;
    bar_ = std::make_unique<ProgressReporter>(stage, unit_, quiet_);
  }
  (*bar_)(done, total);
}

void StageBars::finish() {
  if (bar_) bar_->finish();
  bar_.reset();
}

}  // namespace orderband::cli
