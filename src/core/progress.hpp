#pragma once
// Progress lines for long work: shown on stderr only when stderr is a terminal, throttled to a
// few updates per second, erased when done. Quiet in pipes, logs and CI.
#include <chrono>
#include <string>

namespace covey {

class Progress {
 public:
  explicit Progress(std::string label, bool enabled = stderr_is_terminal());
  ~Progress();
  // Shows `done` of `total` (total 0: unknown) and an extra status text.
  void update(double done, double total = 0, const std::string& status = "");
  void finish();
  static bool stderr_is_terminal();

 private:
  std::string label_;
  bool enabled_;
  bool shown_ = false;
  std::chrono::steady_clock::time_point start_, last_;
};

}  // namespace covey
