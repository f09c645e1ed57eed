// Per-member histograms; see histogram.hpp for the bin convention.
#include "stats/histogram.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#if defined(__AVX512F__)
#include <immintrin.h>
#endif

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
// is below edge_b it is below edge_b+1 too. Plain arithmetic, no table look-ups. With AVX-512
// the members go eight at a time in explicit vector operations, in doubles until the slot:
// the same edges (fused multiply-adds, as the compiler contracts the scalar form), and
// min(b - [v < edge_b] + [v >= edge_b+1], bins - 1), the scalar form's guards folded in: at
// b = 0 the edge is low itself, which a counted value is not below, and at the last bin the
// step up is undone by the minimum.
namespace {

/// The bin rule of one histogram with its constants prepared once (SIMD broadcasts included),
/// for many rows of members.
class BinRule {
 public:
  BinRule(int bins, double low, double high, double scale, double bin_width)
      : low_(low), high_(high), scale_(scale), bin_width_(bin_width),
        last_(bins - 1), stride_(bins + 1), discard_(bins) {}

  /// slot[m] = m (bins + 1) + the bin of values[m], or + bins (a discard slot) when the value
  /// is not counted, for m < count.
  [[gnu::always_inline]] inline void row(const double* values, int count,
                                         std::int32_t* slot) const {
    int m = 0;
#if defined(__AVX512F__)
    __m512i first = lane_offsets_;  // m stride for the register's members
    for (; m + 8 <= count; m += 8) {
      const __m512d v = _mm512_loadu_pd(values + m);
      const __mmask8 inside = _mm512_cmp_pd_mask(v, vlow_, _CMP_GE_OQ) &
                              _mm512_cmp_pd_mask(v, vhigh_, _CMP_LT_OQ);  // false for NaN
      const __m512d scaled = _mm512_maskz_mul_pd(inside, _mm512_sub_pd(v, vlow_), vscale_);
      const __m512d b = _mm512_min_pd(
          _mm512_roundscale_pd(scaled, _MM_FROUND_TO_NEG_INF | _MM_FROUND_NO_EXC), vlast_);
      const __m512d lower = _mm512_fmadd_pd(b, vwidth_, vlow_);
      const __m512d upper = _mm512_fmadd_pd(_mm512_add_pd(b, one_), vwidth_, vlow_);
      __m512d i = _mm512_mask_sub_pd(b, _mm512_cmp_pd_mask(v, lower, _CMP_LT_OQ), b, one_);
      i = _mm512_mask_add_pd(i, _mm512_cmp_pd_mask(v, upper, _CMP_GE_OQ), i, one_);
      const __m512i bin = _mm512_mask_blend_epi64(inside, vdiscard_,
                                                  _mm512_cvttpd_epi64(_mm512_min_pd(i, vlast_)));
      _mm256_storeu_si256(reinterpret_cast<__m256i*>(slot + m),
                          _mm512_cvtepi64_epi32(_mm512_add_epi64(first, bin)));
      first = _mm512_add_epi64(first, eight_rows_);
    }
#endif
    const double low = low_, high = high_, scale = scale_, bin_width = bin_width_;
    const int last = last_, stride = stride_, discard = discard_;
#pragma GCC ivdep
    for (; m < count; ++m) {
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

 private:
  double low_, high_, scale_, bin_width_;
  int last_, stride_, discard_;
#if defined(__AVX512F__)
  __m512d vlow_ = _mm512_set1_pd(low_), vhigh_ = _mm512_set1_pd(high_),
          vscale_ = _mm512_set1_pd(scale_), vwidth_ = _mm512_set1_pd(bin_width_),
          vlast_ = _mm512_set1_pd(last_), one_ = _mm512_set1_pd(1.0);
  __m512i vdiscard_ = _mm512_set1_epi64(discard_),
          eight_rows_ = _mm512_set1_epi64(std::int64_t{8} * stride_),
          lane_offsets_ = _mm512_mullo_epi64(_mm512_set_epi64(7, 6, 5, 4, 3, 2, 1, 0),
                                             _mm512_set1_epi64(stride_));
#endif
};

}  // namespace

void MemberHistogram::add(const double* values) { add_steps(values, 1); }

void MemberHistogram::add_steps(const double* values, int steps) {
  const BinRule rule(bins_, low_, high_, scale_, bin_width_);
  std::int32_t* slot = slot_.data();
  std::int64_t* counts = counts_.data();
  const int width = width_;
  for (int t = 0; t < steps; ++t) {
    rule.row(values + static_cast<long>(t) * width, width, slot);
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
