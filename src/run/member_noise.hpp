// Counter-based noise for member perturbations. Pure: no state beyond the key.
//
// Draw j of member (seed, case, member) is a pure function of those four integers, so a
// member's perturbation never depends on the batch, the rank or the order of evaluation.
#pragma once

#include <cstdint>

namespace chaosweep::run {

/// The noise stream of one member. Bits come from the SplitMix64 sequence started at a key
/// mixed from (seed, case, member) (Steele, Lea & Flood (2014) OOPSLA, "Fast splittable
/// pseudorandom number generators"); draw j is mix(key + (j + 1) * golden), computed directly.
class MemberNoise {
 public:
  MemberNoise(std::uint64_t seed, std::int64_t case_index, std::int64_t member);

  /// Another stream of the same member: its key is the member's key mixed with `stream`
  /// (>= 1), so its draws are unrelated to the initial perturbation's (stream 0 above).
  /// Streams: 1 the twin direction (run/twins.hpp), 2 the Wiener increments of the
  /// stochastic forcing (wiener_increment below).
  MemberNoise(std::uint64_t seed, std::int64_t case_index, std::int64_t member,
              std::uint64_t stream);

  /// 64 random bits of draw j.
  std::uint64_t bits(std::uint64_t j) const;

  /// Noise for state component i, uniform on [-1, 1) (from draw i).
  double uniform(std::uint64_t i) const;

  /// Noise for state component i, standard normal (Box-Muller from draws 2i and 2i + 1).
  double gaussian(std::uint64_t i) const;

 private:
  std::uint64_t key_;
};

/// The Wiener increment, N(0, dt), of noisy variable v (of `variables`) at step k of the
/// stream: sqrt_dt times the stream's Gaussian draw k * variables + v. Keyed by the stream's
/// (seed, case, member) and by (k, v) alone, so it is the same on any rank, in any batch and
/// after any resume.
double wiener_increment(const MemberNoise& stream, std::int64_t step, int variables, int v,
                        double sqrt_dt);

}  // namespace chaosweep::run
