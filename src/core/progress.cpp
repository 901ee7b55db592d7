#include "core/progress.hpp"

#include <unistd.h>

#include <cstdio>

namespace covey {

Progress::Progress(std::string label, bool enabled)
    : label_(std::move(label)), enabled_(enabled), start_(std::chrono::steady_clock::now()) {
  last_ = start_ - std::chrono::seconds(1);
}

Progress::~Progress() {
  finish();
}

bool Progress::stderr_is_terminal() {
  return ::isatty(STDERR_FILENO) == 1;
}

void Progress::update(double done, double total, const std::string& status) {
  if (!enabled_) return;
  const auto now = std::chrono::steady_clock::now();
  if (now - last_ < std::chrono::milliseconds(250)) return;
  last_ = now;
  const double elapsed = std::chrono::duration<double>(now - start_).count();
  if (total > 0) {
    const double frac = done / total;
    const double eta = frac > 0 ? elapsed * (1 - frac) / frac : 0;
    std::fprintf(stderr, "\r\033[K%s: %5.1f%%  %.0fs elapsed, ~%.0fs left  %s", label_.c_str(),
                 100 * frac, elapsed, eta, status.c_str());
  } else {
    std::fprintf(stderr, "\r\033[K%s: %.0f  %.0fs  %s", label_.c_str(), done, elapsed,
                 status.c_str());
  }
  std::fflush(stderr);
  shown_ = true;
}

void Progress::finish() {
  if (enabled_ && shown_) {
    std::fprintf(stderr, "\r\033[K");
    std::fflush(stderr);
  }
  shown_ = false;
}

}  // namespace covey
