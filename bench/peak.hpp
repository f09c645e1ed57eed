// What the core can do: double-precision FMA throughput at the SIMD width the benchmark was
// built for, and a description of that SIMD level.
#pragma once

#include <string>

namespace chaosweep::bench {

/// "AVX-512 (512-bit vectors, FMA)" etc., from the compiler's target macros.
std::string simd_level();

/// Doubles per vector register at that level (8, 4 or 2).
int simd_doubles();

/// Double-precision GFLOP/s of one thread running independent fused multiply-adds on full
/// vectors (12 chains, enough to cover the FMA latency on current cores), over about
/// `seconds` of CPU time. An FMA counts as 2 flops.
double fma_peak_gflops(double seconds);

}  // namespace chaosweep::bench
