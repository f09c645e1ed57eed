// Per-member histograms; see histogram.hpp for the bin convention.
#include "stats/histogram.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "core/error.hpp"

namespace chaosweep::stats {

double histogram_edge(double low, double high, int bins, int i) {
  if (i == bins) return high;  // exact upper edge despite rounding of the formula
  return low + static_cast<double>(i) * ((high - low) / bins);
}

MemberHistogram::MemberHistogram(int bins, double low, double high, int width)
    : bins_(bins),
      width_(width),
      low_(low),
      high_(high),
      scale_(bins / (high - low)),
      bin_width_((high - low) / bins) {
  if (bins < 1 || width < 1 || !(low < high) || !std::isfinite(scale_) ||
      static_cast<double>(width) * (bins + 1) > 2e9) {
    throw std::invalid_argument("MemberHistogram needs bins >= 1, width >= 1 and low < high.");
  }
  counts_.assign(static_cast<std::size_t>(width) * static_cast<std::size_t>(bins + 1), 0);
  slot_.assign(static_cast<std::size_t>(width), 0);
}

// The scaled position b = floor((v - low) * scale) gives the bin up to rounding; one comparison
// with the edges on each side, computed as histogram_edge() computes them, makes the
// assignment exact (edge_b <= v < edge_b+1). Both comparisons use the first estimate b: when v
// is below edge_b it is below edge_b+1 too. Plain arithmetic, no table look-ups, so the loop
// vectorises without gathers.
void MemberHistogram::slots(const double* values, std::int32_t* slot) const {
  const double low = low_, high = high_, scale = scale_, bin_width = bin_width_;
  const int last = bins_ - 1, stride = bins_ + 1, discard = bins_, width = width_;
#pragma GCC ivdep
  for (int m = 0; m < width; ++m) {
    const double v = values[m];
    const bool inside = (v >= low) & (v < high);  // false for NaN
    int b = static_cast<int>(inside ? (v - low) * scale : 0.0);
    b = b < last ? b : last;
    const double lower = low + static_cast<double>(b) * bin_width;      // edge_b
    const double upper = low + static_cast<double>(b + 1) * bin_width;  // edge_b+1 if b < last
    const int i = b - ((b > 0) & (v < lower)) + ((b < last) & (v >= upper));
    slot[m] = m * stride + (inside ? i : discard);
  }
}

void MemberHistogram::add(const double* values) { add_steps(values, 1); }

void MemberHistogram::add_steps(const double* values, int steps) {
  std::int32_t* slot = slot_.data();
  std::int64_t* counts = counts_.data();
  const int width = width_;
  for (int t = 0; t < steps; ++t) {
    slots(values + static_cast<long>(t) * width, slot);
    for (int m = 0; m < width; ++m) ++counts[slot[m]];
  }
}

std::int64_t MemberHistogram::count(int member, int bin) const {
  return counts_[static_cast<long>(member) * (bins_ + 1) + bin];
}

void MemberHistogram::add_member_to(int member, std::int64_t* total) const {
  const std::int64_t* c = counts_.data() + static_cast<long>(member) * (bins_ + 1);
  for (int i = 0; i < bins_; ++i) total[i] += c[i];
}

void MemberHistogram::save(const std::string& prefix, SavedState& out) const {
  std::vector<std::int64_t> counts(static_cast<std::size_t>(width_) * bins_);
  for (int m = 0; m < width_; ++m) {
    for (int i = 0; i < bins_; ++i) counts[static_cast<std::size_t>(m) * bins_ + i] = count(m, i);
  }
  out.put(prefix + "counts", std::move(counts));
}

void MemberHistogram::load(const std::string& prefix, SavedStateReader& in) {
  const std::vector<std::int64_t>& counts =
      in.integers(prefix + "counts", static_cast<std::size_t>(width_) * bins_);
  std::fill(counts_.begin(), counts_.end(), 0);
  for (int m = 0; m < width_; ++m) {
    for (int i = 0; i < bins_; ++i) {
      counts_[static_cast<std::size_t>(m) * (bins_ + 1) + i] =
          counts[static_cast<std::size_t>(m) * bins_ + i];
    }
  }
}

}  // namespace chaosweep::stats
