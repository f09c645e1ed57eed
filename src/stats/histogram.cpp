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

namespace {

// The bin rule's scalar form: the scaled position b = floor((v - low) * scale), corrected by
// one comparison with the edge on each side, computed as histogram_edge() computes them in
// this translation unit (histogram_lanes.hpp explains the rule). A branch-free loop; with
// AVX-512 it takes only the members after the last whole register.
void bin_row(const double* values, int first, int count, int bins, double low, double high,
             double scale, double bin_width, std::int32_t* slot) {
  const int last = bins - 1, stride = bins + 1;
#pragma GCC ivdep
  for (int m = first; m < count; ++m) {
    const double v = values[m];
    const bool inside = (v >= low) & (v < high);  // false for NaN
    int b = static_cast<int>(inside ? (v - low) * scale : 0.0);
    b = b < last ? b : last;
    const double lower = low + static_cast<double>(b) * bin_width;      // edge_b
    const double upper = low + static_cast<double>(b + 1) * bin_width;  // edge_b+1 if b < last
    const int i = b - ((b > 0) & (v < lower)) + ((b < last) & (v >= upper));
    slot[m] = m * stride + (inside ? i : bins);
  }
}

}  // namespace

void MemberHistogram::add(const double* values) { add_steps(values, 1); }

void MemberHistogram::add_steps(const double* values, int steps) {
  std::int32_t* slot = slot_.data();
  std::int64_t* counts = counts_.data();
  const int width = width_;
#if defined(__AVX512F__)
  const HistogramLanes rule = lanes();
  const __m512i rows = _mm512_set1_epi64(std::int64_t{8} * (bins_ + 1));
  const __m512i lane_rows = _mm512_mullo_epi64(_mm512_set_epi64(7, 6, 5, 4, 3, 2, 1, 0),
                                               _mm512_set1_epi64(bins_ + 1));
#endif
  for (int t = 0; t < steps; ++t) {
    const double* v = values + static_cast<long>(t) * width;
    int m = 0;
#if defined(__AVX512F__)
    __m512i first = lane_rows;  // m (bins + 1) of the register's members
    for (; m + 8 <= width; m += 8) {
      const __m512i bin = rule.bins(_mm512_loadu_pd(v + m));
      _mm256_storeu_si256(reinterpret_cast<__m256i*>(slot + m),
                          _mm512_cvtepi64_epi32(_mm512_add_epi64(first, bin)));
      first = _mm512_add_epi64(first, rows);
    }
#endif
    bin_row(v, m, width, bins_, low_, high_, scale_, bin_width_, slot);
    for (int k = 0; k < width; ++k) ++counts[slot[k]];
  }
}

void MemberHistogram::add_slots(const std::int32_t* slots, int steps) {
  std::int64_t* counts = counts_.data();
  const long n = static_cast<long>(steps) * width_;
#pragma GCC unroll 8
  for (long k = 0; k < n; ++k) ++counts[slots[k]];
}

#if defined(__AVX512F__)
HistogramLanes MemberHistogram::lanes() const {
  return HistogramLanes(bins_, low_, high_, scale_, bin_width_);
}
#endif

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
