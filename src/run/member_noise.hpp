// Counter-based noise for member perturbations. Pure: no state beyond the key.
//
// Draw j of member (seed, case, member) is a pure function of those four integers, so a
// member's perturbation never depends on the batch, the rank or the order of evaluation.
#pragma once

#include <cstddef>
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

  /// Noise for state component i, standard normal (Box-Muller from draws 2i and 2i + 1): the
  /// cosine branch of the stream's pair i (run/gaussian_lanes.hpp, bitwise gaussian_pair's c
  /// at scale 1, and so gaussian_row's for many members at once).
  double gaussian(std::uint64_t i) const;

  /// The stream's key (the SplitMix64 start): the Wiener increments' draws are computed from
  /// it kLanes streams at a time (run/gaussian_lanes.hpp).
  std::uint64_t key() const { return key_; }

 private:
  std::uint64_t key_;
};

/// Where the Wiener increment of noisy variable r (of `noisy` noisy variables, in the noise's
/// order) at step k is drawn: draw index i = k * noisy + r of the stream, the cosine branch
/// (i even) or the sine branch (i odd) of its Gaussian pair i / 2 (run/gaussian_lanes.hpp:
/// Box-Muller from words 2 pair and 2 pair + 1). Every value of every pair is used, also
/// across steps when `noisy` is odd.
struct WienerDraw {
  std::uint64_t pair;
  bool sine;
};
WienerDraw wiener_draw(std::int64_t step, int noisy, int r);

/// The Wiener increment, N(0, dt), of noisy variable r at step k: sqrt_dt times its branch
/// (wiener_draw). Keyed by the stream's (seed, case, member) and by (k, r) alone, so it is the
/// same on any rank, in any batch and after any resume.
double wiener_increment(const MemberNoise& stream, std::int64_t step, int noisy, int r,
                        double sqrt_dt);

/// wiener_increment of every noisy variable r = 0 .. noisy - 1 at step k, out[r * stride];
/// bitwise the same values, each Box-Muller pair computed once.
void wiener_increments(const MemberNoise& stream, std::int64_t step, int noisy, double sqrt_dt,
                       double* out, std::size_t stride);

}  // namespace chaosweep::run
