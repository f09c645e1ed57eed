// Blocked shifted sums merged with Chan's update; see time_moments.hpp for the formulas.
#include "stats/time_moments.hpp"

#include <stdexcept>

namespace chaosweep::stats {

TimeMoments::TimeMoments(int series, int width, int block_length)
    : series_(series), width_(width), block_length_(block_length) {
  if (series < 0 || width < 1 || block_length < 1) {
    throw std::invalid_argument("TimeMoments needs series >= 0, width >= 1, block length >= 1.");
  }
  const std::size_t size = static_cast<std::size_t>(series) * static_cast<std::size_t>(width);
  origin_.assign(size, 0.0);
  shift_.assign(size, 0.0);
  s1_.assign(size, 0.0);
  s2_.assign(size, 0.0);
  running_.assign(size, Moments{});
}

void TimeMoments::add(const double* const* columns) {
  const int w = width_;
  for (int s = 0; s < series_; ++s) {
    const double* v = columns[s];
    double* k0 = origin_.data() + static_cast<long>(s) * w;
    double* k = shift_.data() + static_cast<long>(s) * w;
    double* s1 = s1_.data() + static_cast<long>(s) * w;
    double* s2 = s2_.data() + static_cast<long>(s) * w;
    if (count() == 0) {
      for (int m = 0; m < w; ++m) k0[m] = v[m];  // the series' origin
    }
    if (in_block_ == 0) {
      for (int m = 0; m < w; ++m) k[m] = v[m];  // the block's shift; its deviation is 0
    }
    // members are independent and the accumulator's rows never alias the caller's values
#pragma GCC ivdep
    for (int m = 0; m < w; ++m) {
      const double d = v[m] - k[m];
      s1[m] += d;
      s2[m] += d * d;
    }
  }
  if (++in_block_ == block_length_) flush();
}

Moments TimeMoments::block_moments(long index) const {
  Moments b;
  if (in_block_ == 0) return b;
  const double nb = in_block_;
  const double s1 = s1_[index];
  b.n = nb;
  b.mean = (shift_[index] - origin_[index]) + s1 / nb;  // relative to the origin K0
  const double m2 = s2_[index] - s1 * s1 / nb;
  b.m2 = m2 < 0.0 ? 0.0 : m2;  // >= 0 in exact arithmetic: clamp rounding, keep NaN
  return b;
}

void TimeMoments::flush() {
  const long size = static_cast<long>(running_.size());
  for (long i = 0; i < size; ++i) {
    running_[i].merge(block_moments(i));
    s1_[i] = 0.0;
    s2_[i] = 0.0;
  }
  merged_count_ += in_block_;
  in_block_ = 0;
}

Moments TimeMoments::moments(int series, int member) const {
  const long index = static_cast<long>(series) * width_ + member;
  Moments total = running_[index];
  total.merge(block_moments(index));
  total.mean += origin_[index];
  return total;
}

}  // namespace chaosweep::stats
