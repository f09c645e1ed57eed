// Internal to run/: Gaussian pairs from counter-keyed uniforms, kLanes at a time (one SIMD
// register: integrators/lanes.hpp). Pure numerics: no state, no allocation.
//
// Lane l of a call computes the Box-Muller pair `pair[l]` of the SplitMix64 stream whose key
// is `key[l]` (run/member_noise.hpp), from the two 64-bit words w1 = bits(2 pair) and
// w2 = bits(2 pair + 1), bits(j) = mix64(key + (j + 1) golden):
//   u1 = 1 - (w1 >> 12) 2^-52 in (0, 1],   r = sqrt(-2 ln u1),
//   (cos phi, sin phi) a uniform point on the unit circle from w2 (gaussian_lanes.cpp: an angle
//   in [-pi/4, pi/4) from 51 bits, carried by one of the square's eight symmetries chosen by
//   three more),   c = r cos phi,   s = r sin phi
// (G. E. P. Box and M. E. Muller (1958), Ann. Math. Statist. 29, 610). The logarithm, sine
// and cosine are the project's own polynomial evaluations (gaussian_lanes.cpp), with every
// operation element-wise, fused multiply-adds written out and the translation unit compiled
// without floating-point contraction, so a lane's result depends only on its own key and pair:
// bitwise the same in any lane, at any batch width, in the fused kernels and in the generic
// path, on every rank.
#pragma once

#include <cstdint>

#include "integrators/lanes.hpp"

namespace chaosweep::run {

/// kLanes unsigned 64-bit integers side by side (stream keys, counters).
using KeyLanes =
    std::uint64_t __attribute__((vector_size(integrators::kLanes * sizeof(std::uint64_t))));

/// The Box-Muller pair `pair` of the stream `key` times `scale`: the cosine branch
/// (scale r) cos(2 pi u2) in c, the sine branch (scale r) sin(2 pi u2) in s, each a normal of
/// standard deviation scale, the two independent; bitwise what any lane of gaussian_row gives.
void gaussian_pair(std::uint64_t key, std::uint64_t pair, double scale, double& c, double& s);

/// The pairs first_pair .. first_pair + count - 1 of the one stream `key` times `scale` into
/// c[i] and s[i] (a shared realisation's draws of a step), kLanes pairs at a time: bitwise
/// gaussian_pair's values.
void gaussian_stream(std::uint64_t key, std::uint64_t first_pair, int count, double scale,
                     double* c, double* s);

/// The pair from the two words directly (w1 = bits(2 pair), w2 = bits(2 pair + 1)), as every
/// lane computes it after the stream's mixing: for checks at chosen words (the ends of the
/// radius's range, the angle's ends and each of the eight symmetries).
void gaussian_from_words(std::uint64_t w1, std::uint64_t w2, double& c, double& s);

/// The pair `pair` of n streams (keys[0 .. n-1]) times `scale` into c[m] and s[m] (either
/// output may be null: not wanted), kLanes streams at a time.
void gaussian_row(const std::uint64_t* keys, int n, std::uint64_t pair, double scale, double* c,
                  double* s);

}  // namespace chaosweep::run
