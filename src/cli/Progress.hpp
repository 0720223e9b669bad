#pragma once
// A one-line progress bar on stderr, drawn only when stderr is a terminal
// and the run has lasted long enough for it to help (short runs stay
// silent, and logs never fill with carriage returns); between the bars, a
// line naming the stage the run is in.

#include <chrono>
#include <cstddef>
#include <cstdio>
#include <string>

namespace reachwise::cli {

class ProgressBar {
public:
  /// `enabled` false (e.g. --quiet) draws nothing whatever the terminal.
  ProgressBar(std::string label, bool enabled);
  ~ProgressBar();
  ProgressBar(const ProgressBar&) = delete;
  ProgressBar& operator=(const ProgressBar&) = delete;

  /// Redraws at most ten times a second, from 0.5 s after construction on.
  void update(std::size_t done, std::size_t total);
  /// Shows what the program is doing now (e.g. "writing results"), until
  /// the next update or finish(); at once, since stages are long.
  void stage(const std::string& what);
  /// Clears the line when something was drawn.
  void finish();

private:
  using Clock = std::chrono::steady_clock;
  std::string label_;
  bool enabled_;
  bool drawn_ = false;
  std::size_t best_ = 0;
  Clock::time_point start_, last_;
};

}  // namespace reachwise::cli
