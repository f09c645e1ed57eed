// A histogram's bin rule (stats/histogram.hpp) on eight values at once, in explicit AVX-512
// operations, so that it gives the same bins in any translation unit whatever its
// floating-point flags: MemberHistogram's own bin loop and the fused kernels (run/), which bin
// the observable as they step. Only with AVX-512. Pure numerics.
//
// The scaled position b = floor((v - low) scale) gives the bin up to rounding; one comparison
// with the edges on each side, edge_b = low + b width as histogram_edge() computes it (one
// fused multiply-add, as the compiler contracts it there), makes the assignment exact
// (edge_b <= v < edge_b+1): the bin is min(b - [v < edge_b] + [v >= edge_b+1], bins - 1). At
// b = 0 the edge is low itself, which a counted value is not below; a value just below high
// may scale to b = bins or give b + 1 = bins, and the minimum makes either the last bin, as
// the scalar form's clamp and guards do (the scaled position is off by far less than a bin:
// bins <= 2e9). Everything in doubles until the bin.
#pragma once

#if defined(__AVX512F__)
#include <immintrin.h>

#include <cstdint>

namespace chaosweep::stats {

class HistogramLanes {
 public:
  /// The rule of `bins` bins on [low, high) with scale = bins / (high - low) and
  /// width = (high - low) / bins, as MemberHistogram holds them.
  HistogramLanes(int bins, double low, double high, double scale, double width)
      : low_(_mm512_set1_pd(low)), high_(_mm512_set1_pd(high)), scale_(_mm512_set1_pd(scale)),
        width_(_mm512_set1_pd(width)), last_(_mm512_set1_pd(bins - 1)),
        discard_(_mm512_set1_epi64(bins)) {}

  /// The bin of each of the eight values, or `bins` (the discard slot) for a value outside
  /// [low, high) or NaN.
  [[gnu::always_inline]] inline __m512i bins(__m512d v) const {
    const __m512d one = _mm512_set1_pd(1.0);
    const __mmask8 inside = _mm512_cmp_pd_mask(v, low_, _CMP_GE_OQ) &
                            _mm512_cmp_pd_mask(v, high_, _CMP_LT_OQ);  // false for NaN
    const __m512d scaled = _mm512_maskz_mul_pd(inside, _mm512_sub_pd(v, low_), scale_);
    const __m512d b = _mm512_roundscale_pd(scaled, _MM_FROUND_TO_NEG_INF | _MM_FROUND_NO_EXC);
    const __m512d lower = _mm512_fmadd_pd(b, width_, low_);
    const __m512d upper = _mm512_fmadd_pd(_mm512_add_pd(b, one), width_, low_);
    __m512d i = _mm512_mask_sub_pd(b, _mm512_cmp_pd_mask(v, lower, _CMP_LT_OQ), b, one);
    i = _mm512_mask_add_pd(i, _mm512_cmp_pd_mask(v, upper, _CMP_GE_OQ), i, one);
    return _mm512_mask_blend_epi64(inside, discard_, _mm512_cvttpd_epi64(_mm512_min_pd(i, last_)));
  }

 private:
  __m512d low_, high_, scale_, width_, last_;
  __m512i discard_;
};

}  // namespace chaosweep::stats
#endif
