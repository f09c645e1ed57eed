// SplitMix64 stream per member and the two noise distributions; see member_noise.hpp.
#include "run/member_noise.hpp"

#include "run/gaussian_lanes.hpp"

namespace chaosweep::run {
namespace {

constexpr std::uint64_t kGolden = 0x9e3779b97f4a7c15ULL;  // 2^64 / golden ratio, odd
constexpr double kTwoPow53 = 9007199254740992.0;

/// SplitMix64 output mixing function (a bijection of 64-bit integers).
std::uint64_t mix64(std::uint64_t z) {
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

/// Top 53 bits as a double in [0, 1), a multiple of 2^-53.
double unit(std::uint64_t bits) { return static_cast<double>(bits >> 11) / kTwoPow53; }

}  // namespace

MemberNoise::MemberNoise(std::uint64_t seed, std::int64_t case_index, std::int64_t member) {
  std::uint64_t k = mix64(seed + kGolden);
  k = mix64(k ^ (static_cast<std::uint64_t>(case_index) + 2 * kGolden));
  key_ = mix64(k ^ (static_cast<std::uint64_t>(member) + 3 * kGolden));
}

MemberNoise::MemberNoise(std::uint64_t seed, std::int64_t case_index, std::int64_t member,
                         std::uint64_t stream)
    : MemberNoise(seed, case_index, member) {
  key_ = mix64(key_ ^ (stream + 4 * kGolden));
}

std::uint64_t MemberNoise::bits(std::uint64_t j) const { return mix64(key_ + (j + 1) * kGolden); }

double MemberNoise::uniform(std::uint64_t i) const { return 2.0 * unit(bits(i)) - 1.0; }

// Box-Muller: z = sqrt(-2 ln u1) cos phi from the words of draws 2i and 2i + 1, the cosine
// branch of pair i computed as gaussian_lanes.hpp does (its own logarithm and cosine, not the C
// library's), so that gaussian_row gives the same values for many members at once.
double MemberNoise::gaussian(std::uint64_t i) const {
  double c = 0.0, s = 0.0;
  gaussian_pair(key_, i, 1.0, c, s);
  return c;
}

WienerDraw wiener_draw(std::int64_t step, int noisy, int r) {
  const std::uint64_t i = static_cast<std::uint64_t>(step) * static_cast<std::uint64_t>(noisy) +
                          static_cast<std::uint64_t>(r);
  return {i / 2, i % 2 == 1};
}

double wiener_increment(const MemberNoise& stream, std::int64_t step, int noisy, int r,
                        double sqrt_dt) {
  const WienerDraw d = wiener_draw(step, noisy, r);
  double c = 0.0, s = 0.0;
  gaussian_pair(stream.key(), d.pair, sqrt_dt, c, s);
  return d.sine ? s : c;
}

void wiener_increments(const MemberNoise& stream, std::int64_t step, int noisy, double sqrt_dt,
                       double* out, std::size_t stride) {
  std::uint64_t have = ~std::uint64_t{0};
  double c = 0.0, s = 0.0;
  for (int r = 0; r < noisy; ++r) {
    const WienerDraw d = wiener_draw(step, noisy, r);
    if (d.pair != have) {
      gaussian_pair(stream.key(), d.pair, sqrt_dt, c, s);
      have = d.pair;
    }
    out[static_cast<std::size_t>(r) * stride] = d.sine ? s : c;
  }
}

}  // namespace chaosweep::run
