// Per-member histograms; see histogram.hpp for the bin convention.
#include "stats/histogram.hpp"

#include <cmath>
#include <stdexcept>

namespace chaosweep::stats {

double histogram_edge(double low, double high, int bins, int i) {
  if (i == bins) return high;  // exact upper edge despite rounding of the formula
  return low + (high - low) * static_cast<double>(i) / static_cast<double>(bins);
}

MemberHistogram::MemberHistogram(int bins, double low, double high, int width)
    : bins_(bins), width_(width), low_(low), high_(high), scale_(bins / (high - low)) {
  if (bins < 1 || width < 1 || !(low < high) || !std::isfinite(scale_)) {
    throw std::invalid_argument("MemberHistogram needs bins >= 1, width >= 1 and low < high.");
  }
  edges_.resize(static_cast<std::size_t>(bins) + 1);
  for (int i = 0; i <= bins; ++i) edges_[i] = histogram_edge(low, high, bins, i);
  counts_.assign(static_cast<std::size_t>(width) * static_cast<std::size_t>(bins), 0);
}

// The scaled position gives the bin up to rounding; one comparison with the neighbouring
// edges on each side makes the assignment agree exactly with edges_.
int MemberHistogram::bin_of(double v) const {
  if (!(v >= low_ && v < high_)) return -1;  // also rejects NaN
  int i = static_cast<int>((v - low_) * scale_);
  if (i > bins_ - 1) i = bins_ - 1;
  if (i > 0 && v < edges_[i]) --i;
  if (i < bins_ - 1 && v >= edges_[i + 1]) ++i;
  return i;
}

void MemberHistogram::add(const double* values) {
  for (int m = 0; m < width_; ++m) {
    const int i = bin_of(values[m]);
    if (i >= 0) ++counts_[static_cast<long>(m) * bins_ + i];
  }
}

std::int64_t MemberHistogram::count(int member, int bin) const {
  return counts_[static_cast<long>(member) * bins_ + bin];
}

void MemberHistogram::add_member_to(int member, std::int64_t* total) const {
  const std::int64_t* c = counts_.data() + static_cast<long>(member) * bins_;
  for (int i = 0; i < bins_; ++i) total[i] += c[i];
}

}  // namespace chaosweep::stats
