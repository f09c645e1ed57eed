// FMA throughput loop; see peak.hpp. GCC vector extensions give full-width vectors at every
// SIMD level without intrinsics; -ffp-contract (on by default) turns a * b + c into an FMA
// where the target has one.
#include "peak.hpp"

#include <cstdint>

#include "measure.hpp"

namespace chaosweep::bench {
namespace {

#if defined(__AVX512F__)
constexpr int kDoubles = 8;
#elif defined(__AVX__)
constexpr int kDoubles = 4;
#else
constexpr int kDoubles = 2;
#endif
using Vector = double __attribute__((vector_size(kDoubles * sizeof(double))));
constexpr int kChains = 12;  // > latency x FMA pipes (4 x 2); + 2 operands fits 16 registers

/// `iterations` rounds of acc_i <- acc_i * a + b on kChains independent vectors.
__attribute__((noinline)) double fma_chains(std::int64_t iterations, double a_value,
                                            double b_value) {
  Vector acc[kChains];
  Vector a, b;
  for (int l = 0; l < kDoubles; ++l) {
    a[l] = a_value;
    b[l] = b_value;
  }
  for (int c = 0; c < kChains; ++c) acc[c] = a + static_cast<double>(c);
  for (std::int64_t it = 0; it < iterations; ++it) {
#pragma GCC unroll 12
    for (int c = 0; c < kChains; ++c) acc[c] = acc[c] * a + b;
  }
  double sum = 0.0;
  for (int c = 0; c < kChains; ++c) {
    for (int l = 0; l < kDoubles; ++l) sum += acc[c][l];
  }
  return sum;
}

}  // namespace

std::string simd_level() {
#if defined(__AVX512F__)
  return "AVX-512F (512-bit vectors, 8 doubles, FMA)";
#elif defined(__AVX2__) && defined(__FMA__)
  return "AVX2 + FMA (256-bit vectors, 4 doubles)";
#elif defined(__AVX__)
  return "AVX (256-bit vectors, 4 doubles, no FMA)";
#else
  return "SSE2 (128-bit vectors, 2 doubles, no FMA)";
#endif
}

int simd_doubles() { return kDoubles; }

double fma_peak_gflops(double seconds) {
  static std::int64_t iterations = 1 << 16;  // grown once until a run takes `seconds`
  for (;;) {
    const double start = thread_cpu_seconds();
    const double sink = fma_chains(iterations, 0.999999, 1e-7);
    const double used = thread_cpu_seconds() - start;
    if (used >= seconds || sink == 12345.678) {
      const double flops = 2.0 * kDoubles * kChains * static_cast<double>(iterations);
      return flops / used / 1e9;
    }
    iterations *= 2;
  }
}

}  // namespace chaosweep::bench
