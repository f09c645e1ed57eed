// Lanes: the values of 8 members side by side, as one GCC vector-extension value. Arithmetic
// on Lanes is element-wise IEEE-754 double arithmetic, exactly what the same expression does
// on one double (fused multiply-add contraction included), so code templated on the value
// type gives bitwise the same result per member for T = double and T = Lanes. The compiler
// maps Lanes onto the build's SIMD registers: one 512-bit register with AVX-512, two 256-bit
// with AVX2, four 128-bit with SSE2. Pure numerics.
#pragma once

#include <cstdint>
#include <cstring>

namespace chaosweep::integrators {

constexpr int kLanes = 8;  // members per Lanes value; batch widths are multiples of it
using Lanes = double __attribute__((vector_size(kLanes * sizeof(double))));
using LaneInts = std::int64_t __attribute__((vector_size(kLanes * sizeof(std::int64_t))));

/// 8 consecutive doubles from p (no alignment needed).
inline Lanes load_lanes(const double* p) {
  Lanes v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
inline void store_lanes(double* p, Lanes v) { std::memcpy(p, &v, sizeof v); }

inline LaneInts load_lanes(const std::int64_t* p) {
  LaneInts v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
inline void store_lanes(std::int64_t* p, LaneInts v) { std::memcpy(p, &v, sizeof v); }

}  // namespace chaosweep::integrators
