// Progress of a long run on rank 0: percent done, member-steps per second, time left.
#pragma once

#include <chrono>
#include <cstdint>
#include <string>

namespace chaosweep::app {

enum class ProgressMode { automatic, bar, log, none };

/// Parses "auto", "bar", "log" or "none" (throws UsageError otherwise).
ProgressMode parse_progress_mode(const std::string& text);

class Progress {
 public:
  /// `total` units of work on this rank, each worth `member_steps_per_unit`; `ranks` scales
  /// the campaign-wide rate shown (shares are balanced to within one batch). `already_done`
  /// units (read back from checkpoints) count towards the percentage, not the rate or the time
  /// left.
  Progress(ProgressMode mode, bool enabled, std::int64_t total, double member_steps_per_unit,
           int ranks, std::int64_t already_done = 0);
  void advance(std::int64_t done_units);  // cumulative units done
  void finish();

 private:
  void show();
  ProgressMode mode_;
  std::int64_t total_;
  std::int64_t done_ = 0;
  std::int64_t already_done_ = 0;
  double per_unit_;
  int ranks_;
  std::chrono::steady_clock::time_point start_, last_shown_;
  int last_percent_ = -1;
};

}  // namespace chaosweep::app
