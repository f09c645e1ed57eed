// Lanes: the values of kLanes members side by side, one SIMD register's worth of doubles at
// the build's SIMD level (8 with AVX-512, 4 with AVX/AVX2, 2 with SSE2), as a GCC
// vector-extension value. Arithmetic on Lanes is element-wise IEEE-754 double arithmetic,
// exactly what the same expression does on one double (fused multiply-add contraction
// included), so code templated on the value type gives bitwise the same result per member for
// T = double and T = Lanes, whatever kLanes is. Pure numerics.
#pragma once

#include <cstdint>
#include <cstring>

namespace chaosweep::integrators {

#if defined(__AVX512F__)
constexpr int kLanes = 8;
#elif defined(__AVX__)
constexpr int kLanes = 4;
#else
constexpr int kLanes = 2;
#endif
// Members per Lanes value; every batch width the spec allows (a multiple of 8) is a multiple.
using Lanes = double __attribute__((vector_size(kLanes * sizeof(double))));
using LaneInts = std::int64_t __attribute__((vector_size(kLanes * sizeof(std::int64_t))));

/// v unchanged, as a value the compiler cannot see into. A product that ends one expression
/// is then not contracted into the next expression's addition (a fused multiply-add), as it
/// cannot be when the value comes from memory that another function wrote: a fused kernel
/// passes such a value through opaque() to keep bitwise the generic path that stores it.
inline Lanes opaque(Lanes v) {
#if defined(__AVX512F__)
  asm("" : "+v"(v));
#elif defined(__x86_64__) || defined(__i386__)
  asm("" : "+x"(v));
#else
  asm("" : "+m"(v));
#endif
  return v;
}

/// kLanes consecutive doubles from p (no alignment needed).
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
