// Running extremes with the index of their samples; see extremes.hpp for the rule.
#include "stats/extremes.hpp"

#include <stdexcept>

#include "core/error.hpp"

namespace chaosweep::stats {

Extremes::Extremes(int series, int width) : series_(series), width_(width) {
  if (series < 0 || width < 1) {
    throw std::invalid_argument("Extremes needs series >= 0 and width >= 1.");
  }
  const std::size_t size = static_cast<std::size_t>(series) * static_cast<std::size_t>(width);
  min_.assign(size, kInfinity);
  max_.assign(size, -kInfinity);
  min_at_.assign(size, -1);
  max_at_.assign(size, -1);
}

void Extremes::add(const double* const* columns) {
  const long w = width_;
  const std::int64_t index = count_;
  for (int s = 0; s < series_; ++s) {
    const double* v = columns[s];
    double* lo = min_.data() + s * w;
    double* hi = max_.data() + s * w;
    std::int64_t* lo_at = min_at_.data() + s * w;
    std::int64_t* hi_at = max_at_.data() + s * w;
    // members are independent and the accumulator's rows never alias the caller's values
#pragma GCC ivdep
    for (long m = 0; m < w; ++m) add_sample(v[m], index, lo[m], lo_at[m], hi[m], hi_at[m]);
  }
  added(1);
}

void Extremes::added(int samples) {
  if (samples < 1) throw std::invalid_argument("Extremes: a run needs at least one sample.");
  count_ += samples;
}

void Extremes::save(const std::string& prefix, SavedState& out) const {
  out.put(prefix + "min", min_);
  out.put(prefix + "max", max_);
  out.put(prefix + "min_at", min_at_);
  out.put(prefix + "max_at", max_at_);
  out.put(prefix + "count", std::vector<std::int64_t>{count_});
}

void Extremes::load(const std::string& prefix, SavedStateReader& in) {
  const std::size_t size = min_.size();
  const std::int64_t count = in.integers(prefix + "count", 1)[0];
  if (count < 0) throw Error("the saved batch state's `" + prefix + "count` is negative");
  min_ = in.reals(prefix + "min", size);
  max_ = in.reals(prefix + "max", size);
  min_at_ = in.integers(prefix + "min_at", size);
  max_at_ = in.integers(prefix + "max_at", size);
  for (std::size_t i = 0; i < size; ++i) {
    if (min_at_[i] < -1 || min_at_[i] >= count || max_at_[i] < -1 || max_at_[i] >= count) {
      throw Error("the saved batch state's `" + prefix + "min_at` or `" + prefix +
                  "max_at` is out of range");
    }
  }
  count_ = count;
}

}  // namespace chaosweep::stats
