#include "app/progress.hpp"

#include <spdlog/spdlog.h>
#include <unistd.h>

#include <cstdio>

#include "core/error.hpp"

namespace chaosweep::app {
namespace {

std::string format_duration(double seconds) {
  if (!(seconds >= 0) || seconds > 1e8) return "?";
  const long s = static_cast<long>(seconds + 0.5);
  char text[32];
  if (s >= 3600) {
    std::snprintf(text, sizeof text, "%ldh%02ldm", s / 3600, (s / 60) % 60);
  } else {
    std::snprintf(text, sizeof text, "%ldm%02lds", s / 60, s % 60);
  }
  return text;
}

}  // namespace

ProgressMode parse_progress_mode(const std::string& text) {
  if (text == "auto") return ProgressMode::automatic;
  if (text == "bar") return ProgressMode::bar;
  if (text == "log") return ProgressMode::log;
  if (text == "none") return ProgressMode::none;
  throw UsageError("--progress must be auto, bar, log or none, not `" + text + "`");
}

Progress::Progress(ProgressMode mode, bool enabled, std::int64_t total,
                   double member_steps_per_unit, int ranks, std::int64_t already_done)
    : mode_(enabled ? mode : ProgressMode::none),
      total_(total),
      done_(already_done),
      already_done_(already_done),
      per_unit_(member_steps_per_unit),
      ranks_(ranks),
      start_(std::chrono::steady_clock::now()),
      last_shown_(start_) {
  if (mode_ == ProgressMode::automatic) {
    mode_ = isatty(STDERR_FILENO) ? ProgressMode::bar : ProgressMode::log;
  }
}

void Progress::advance(std::int64_t done_units) {
  done_ = done_units;
  if (mode_ == ProgressMode::none || total_ <= 0) return;
  const auto now = std::chrono::steady_clock::now();
  const int percent = static_cast<int>(100 * done_ / total_);
  const double since = std::chrono::duration<double>(now - last_shown_).count();
  if (mode_ == ProgressMode::bar && (since > 0.2 || done_ == total_)) show();
  if (mode_ == ProgressMode::log && (percent / 10 > last_percent_ / 10 || since > 30.0)) {
    last_percent_ = percent;
    show();
  }
}

void Progress::finish() {
  if (mode_ == ProgressMode::bar) std::fprintf(stderr, "\n");
}

void Progress::show() {
  const auto now = std::chrono::steady_clock::now();
  last_shown_ = now;
  const double elapsed = std::chrono::duration<double>(now - start_).count();
  const double fraction = total_ > 0 ? static_cast<double>(done_) / total_ : 1.0;
  const std::int64_t done_here = done_ - already_done_;  // units integrated in this run
  const double rate = elapsed > 0 ? done_here * per_unit_ * ranks_ / elapsed : 0.0;
  const double left =
      done_here > 0 ? elapsed * static_cast<double>(total_ - done_) / done_here : -1.0;
  if (mode_ == ProgressMode::bar) {
    const int width = 30, filled = static_cast<int>(fraction * width);
    std::fprintf(stderr, "\r[%s%s] %5.1f%%  %.3g member-steps/s  ETA %s   ",
                 std::string(filled, '#').c_str(), std::string(width - filled, '.').c_str(),
                 100 * fraction, rate, format_duration(left).c_str());
    std::fflush(stderr);
  } else {
    spdlog::info("progress {:5.1f}%  {:.3g} member-steps/s  ETA {}", 100 * fraction, rate,
                 format_duration(left));
  }
}

}  // namespace chaosweep::app
