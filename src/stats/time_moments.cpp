// Blocked shifted sums merged with Chan's update; see time_moments.hpp for the formulas.
#include "stats/time_moments.hpp"

#include <stdexcept>

#include "core/error.hpp"

namespace chaosweep::stats {

TimeMoments::TimeMoments(int series, int width, int block_length)
    : series_(series),
      width_(width),
      block_length_(block_length),
      blocks_(series * width, block_length) {
  if (series < 0 || width < 1 || block_length < 1) {
    throw std::invalid_argument("TimeMoments needs series >= 0, width >= 1, block length >= 1.");
  }
  const std::size_t size = static_cast<std::size_t>(series) * static_cast<std::size_t>(width);
  origin_.assign(size, 0.0);
  shift_.assign(size, 0.0);
  s1_.assign(size, 0.0);
  s2_.assign(size, 0.0);
  running_.assign(size, Moments{});
  block_means_.assign(size, 0.0);
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
    for (int m = 0; m < w; ++m) add_sample(v[m], k[m], s1[m], s2[m]);
  }
  added(1);
}

void TimeMoments::added(int samples) {
  if (samples < 1 || samples > block_room()) {
    throw std::invalid_argument("TimeMoments: a run of samples crosses a block boundary.");
  }
  in_block_ += samples;
  if (in_block_ == block_length_) flush();
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
    const Moments block = block_moments(i);
    block_means_[i] = block.mean;
    running_[i].merge(block);
    s1_[i] = 0.0;
    s2_[i] = 0.0;
  }
  blocks_.add(block_means_.data());
  merged_count_ += in_block_;
  in_block_ = 0;
}

BlockingEstimate TimeMoments::standard_error(int series, int member) const {
  std::vector<BlockLevel> levels;
  return standard_error(series, member, moments(series, member), levels);
}

BlockingEstimate TimeMoments::standard_error(int series, int member, const Moments& moments,
                                             std::vector<BlockLevel>& levels) const {
  blocks_.levels(series * width_ + member, levels);
  return blocking_estimate(levels, moments.n, moments.variance());
}

Moments TimeMoments::moments(int series, int member) const {
  const long index = static_cast<long>(series) * width_ + member;
  Moments total = running_[index];
  total.merge(block_moments(index));
  total.mean += origin_[index];
  return total;
}

void TimeMoments::save(const std::string& prefix, SavedState& out) const {
  std::vector<double> n(running_.size()), mean(running_.size()), m2(running_.size());
  for (std::size_t i = 0; i < running_.size(); ++i) {
    n[i] = running_[i].n;
    mean[i] = running_[i].mean;
    m2[i] = running_[i].m2;
  }
  out.put(prefix + "origin", origin_);
  out.put(prefix + "shift", shift_);
  out.put(prefix + "s1", s1_);
  out.put(prefix + "s2", s2_);
  out.put(prefix + "n", std::move(n));
  out.put(prefix + "mean", std::move(mean));
  out.put(prefix + "m2", std::move(m2));
  out.put(prefix + "counts", std::vector<std::int64_t>{in_block_, merged_count_});
  blocks_.save(prefix + "blocks.", out);
}

void TimeMoments::load(const std::string& prefix, SavedStateReader& in) {
  const std::size_t size = running_.size();
  const std::vector<std::int64_t>& counts = in.integers(prefix + "counts", 2);
  if (counts[0] < 0 || counts[0] >= block_length_ || counts[1] < 0) {
    throw Error("the saved batch state's `" + prefix + "counts` are out of range");
  }
  origin_ = in.reals(prefix + "origin", size);
  shift_ = in.reals(prefix + "shift", size);
  s1_ = in.reals(prefix + "s1", size);
  s2_ = in.reals(prefix + "s2", size);
  const std::vector<double>& n = in.reals(prefix + "n", size);
  const std::vector<double>& mean = in.reals(prefix + "mean", size);
  const std::vector<double>& m2 = in.reals(prefix + "m2", size);
  for (std::size_t i = 0; i < size; ++i) running_[i] = Moments{n[i], mean[i], m2[i]};
  in_block_ = static_cast<int>(counts[0]);
  merged_count_ = counts[1];
  blocks_.load(prefix + "blocks.", in);
  if (blocks_.base_blocks() * block_length_ != merged_count_) {
    throw Error("the saved batch state's `" + prefix + "blocks.levels` do not match its samples");
  }
}

}  // namespace chaosweep::stats
