// Internal to run/: Gaussian pairs from counter-keyed uniforms, kLanes at a time (one SIMD
// register: integrators/lanes.hpp). Pure numerics: no state, no allocation.
//
// Lane l of a call computes the Box-Muller pair `pair[l]` of the SplitMix64 stream whose key
// is `key[l]` (run/member_noise.hpp): with bits(j) = mix64(key + (j + 1) golden) and
// unit(b) = (b >> 11) 2^-53,
//   u1 = 1 - unit(bits(2 pair)) in (0, 1],   u2 = unit(bits(2 pair + 1)) in [0, 1),
//   r = sqrt(-2 ln u1),   c = r cos(2 pi u2),   s = r sin(2 pi u2)
// (G. E. P. Box and M. E. Muller (1958), Ann. Math. Statist. 29, 610). The logarithm, sine
// and cosine are the project's own polynomial evaluations (gaussian_lanes.cpp), with every
// operation element-wise and the translation unit compiled without floating-point
// contraction, so a lane's result depends only on its own key and pair: bitwise the same in
// any lane, at any batch width, in the fused kernels and in the generic path, on every rank.
#pragma once

#include <cstdint>

#include "integrators/lanes.hpp"

namespace chaosweep::run {

/// kLanes unsigned 64-bit integers side by side (stream keys, counters).
using KeyLanes =
    std::uint64_t __attribute__((vector_size(integrators::kLanes * sizeof(std::uint64_t))));

/// The Box-Muller pair `pair` of each lane's stream `key`: the cosine branch in c, the sine
/// branch in s, each a standard normal, the two independent.
void gaussian_pairs(KeyLanes key, KeyLanes pair, integrators::Lanes& c, integrators::Lanes& s);

/// One lane's worth: gaussian_pairs for a single (key, pair), bitwise any lane's result.
void gaussian_pair(std::uint64_t key, std::uint64_t pair, double& c, double& s);

/// The pair `pair` of n streams (keys[0 .. n-1]) times `scale`: c[m] = scale c_m and
/// s[m] = scale s_m (either output may be null: not wanted). Bitwise gaussian_pairs' lanes.
void gaussian_row(const std::uint64_t* keys, int n, std::uint64_t pair, double scale, double* c,
                  double* s);

}  // namespace chaosweep::run
