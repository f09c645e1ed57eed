// Box-Muller pairs on Lanes; see gaussian_lanes.hpp. Compiled with -ffp-contract=off and
// -fno-math-errno (src/run/CMakeLists.txt): every a * b + c here is rounded twice, whatever the
// compiler would fuse, so the bits do not depend on how a caller's loop is vectorised or
// inlined.
#include "run/gaussian_lanes.hpp"

#include <cstring>

namespace chaosweep::run {
namespace {

using integrators::LaneInts;
using integrators::Lanes;
constexpr int L = integrators::kLanes;

constexpr std::uint64_t kGolden = 0x9e3779b97f4a7c15ULL;  // as in member_noise.cpp

/// SplitMix64's output mixing function, lane by lane (member_noise.cpp's mix64).
inline KeyLanes mix64(KeyLanes z) {
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

/// Top 53 bits as a double in [0, 1), a multiple of 2^-53 (exact conversion: < 2^53).
inline Lanes unit(KeyLanes bits) {
  return __builtin_convertvector(__builtin_convertvector(bits >> 11, LaneInts), Lanes) * 0x1p-53;
}

/// Correctly rounded square root of every lane (the IEEE-754 operation; the translation unit
/// is compiled with -fno-math-errno, so the loop becomes one vector square root).
inline Lanes sqrt_lanes(Lanes v) {
  Lanes r;
  for (int l = 0; l < L; ++l) r[l] = __builtin_sqrt(v[l]);
  return r;
}

/// ln u for u in [2^-53, 1] (normal numbers). u = 2^e m with m in [sqrt(1/2), sqrt(2)),
/// f = m - 1 (exact), s = f / (2 + f), and ln m = 2 atanh s = 2 (s + s^3/3 + s^5/5 + ...):
/// |s| <= 3 - 2 sqrt(2) < 0.1716, so s^2 <= 0.0295 and the series stops after s^21/21, where
/// the next term is below 2^-56 of the first. ln u = e ln2_hi + (e ln2_lo + ln m), with ln 2
/// split so that e ln2_hi is exact for |e| < 2^11 (ln2_hi has 32 significant bits).
inline Lanes log_unit(Lanes u) {
  constexpr double kLn2Hi = 6.93147180369123816490e-01;
  constexpr double kLn2Lo = 1.90821492927058770002e-10;
  constexpr double kSqrt2 = 1.41421356237309504880;
  const KeyLanes b = reinterpret_cast<KeyLanes>(u);
  LaneInts e = __builtin_convertvector(b >> 52, LaneInts) - 1023;
  Lanes m = reinterpret_cast<Lanes>((b & 0x000fffffffffffffULL) | 0x3ff0000000000000ULL);
  const LaneInts big = m > kSqrt2;  // -1 where m is in [sqrt 2, 2): halve it
  m = big ? m * 0.5 : m;
  e -= big;
  const Lanes f = m - 1.0;
  const Lanes s = f / (2.0 + f);
  const Lanes z = s * s;
  Lanes p = Lanes{} + 1.0 / 21.0;
  p = p * z + 1.0 / 19.0;
  p = p * z + 1.0 / 17.0;
  p = p * z + 1.0 / 15.0;
  p = p * z + 1.0 / 13.0;
  p = p * z + 1.0 / 11.0;
  p = p * z + 1.0 / 9.0;
  p = p * z + 1.0 / 7.0;
  p = p * z + 1.0 / 5.0;
  p = p * z + 1.0 / 3.0;
  const Lanes two_s = 2.0 * s;
  const Lanes ln_m = two_s + two_s * (z * p);
  const Lanes ed = __builtin_convertvector(e, Lanes);
  return ed * kLn2Hi + (ed * kLn2Lo + ln_m);
}

/// cos(2 pi u) and sin(2 pi u) for u in [0, 1). q = round(4u), y = u - q/4 in [-1/8, 1/8]
/// (both exact), theta = 2 pi y in [-pi/4, pi/4], where the Taylor series of sin to theta^17
/// and of cos to theta^18 leave terms below 2^-53 of the result; then the quadrant q mod 4
/// swaps and negates them (cos(q pi/2 + theta), sin(q pi/2 + theta)).
inline void sincos_turn(Lanes u, Lanes& c, Lanes& s) {
  constexpr double kTwoPi = 6.283185307179586476925286766559;
  const LaneInts q = __builtin_convertvector(u * 4.0 + 0.5, LaneInts);  // truncation: >= 0
  const Lanes y = u - __builtin_convertvector(q, Lanes) * 0.25;
  const Lanes t = y * kTwoPi;
  const Lanes z = t * t;
  // sin t = t + t z (-1/3! + z (1/5! - ...)), cos t = 1 + z (-1/2! + z (1/4! - ...))
  Lanes ps = Lanes{} + 1.0 / 355687428096000.0;  // 1/17!
  ps = ps * z - 1.0 / 1307674368000.0;           // 1/15!
  ps = ps * z + 1.0 / 6227020800.0;              // 1/13!
  ps = ps * z - 1.0 / 39916800.0;                // 1/11!
  ps = ps * z + 1.0 / 362880.0;                  // 1/9!
  ps = ps * z - 1.0 / 5040.0;                    // 1/7!
  ps = ps * z + 1.0 / 120.0;                     // 1/5!
  ps = ps * z - 1.0 / 6.0;                       // 1/3!
  const Lanes sin_t = t + t * (z * ps);
  Lanes pc = Lanes{} - 1.0 / 6402373705728000.0;  // 1/18!
  pc = pc * z + 1.0 / 20922789888000.0;           // 1/16!
  pc = pc * z - 1.0 / 87178291200.0;              // 1/14!
  pc = pc * z + 1.0 / 479001600.0;                // 1/12!
  pc = pc * z - 1.0 / 3628800.0;                  // 1/10!
  pc = pc * z + 1.0 / 40320.0;                    // 1/8!
  pc = pc * z - 1.0 / 720.0;                      // 1/6!
  pc = pc * z + 1.0 / 24.0;                       // 1/4!
  pc = pc * z - 0.5;                              // 1/2!
  const Lanes cos_t = 1.0 + z * pc;
  const LaneInts quadrant = q & 3;
  const LaneInts swap = (quadrant & 1) != 0;
  const Lanes cs = swap ? sin_t : cos_t, sn = swap ? cos_t : sin_t;
  c = ((quadrant == 1) | (quadrant == 2)) ? -cs : cs;
  s = quadrant >= 2 ? -sn : sn;
}

/// gaussian_pairs' body, inlined into each caller below.
inline void pairs(KeyLanes key, KeyLanes pair, Lanes& c, Lanes& s) {
  const KeyLanes j = 2 * pair;
  const Lanes u1 = 1.0 - unit(mix64(key + (j + 1) * kGolden));
  const Lanes u2 = unit(mix64(key + (j + 2) * kGolden));
  const Lanes r = sqrt_lanes(-2.0 * log_unit(u1));
  Lanes cos_u, sin_u;
  sincos_turn(u2, cos_u, sin_u);
  c = r * cos_u;
  s = r * sin_u;
}

}  // namespace

void gaussian_pairs(KeyLanes key, KeyLanes pair, Lanes& c, Lanes& s) { pairs(key, pair, c, s); }

void gaussian_pair(std::uint64_t key, std::uint64_t pair, double& c, double& s) {
  Lanes cl, sl;
  pairs(KeyLanes{} + key, KeyLanes{} + pair, cl, sl);
  c = cl[0];
  s = sl[0];
}

void gaussian_row(const std::uint64_t* keys, int n, std::uint64_t pair, double scale, double* c,
                  double* s) {
  const KeyLanes counter = KeyLanes{} + pair;
  for (int m = 0; m < n; m += L) {
    const int lanes = n - m < L ? n - m : L;
    KeyLanes key = KeyLanes{} + keys[m];  // a short last block repeats its first key
    std::memcpy(&key, keys + m, static_cast<std::size_t>(lanes) * sizeof(std::uint64_t));
    Lanes cl, sl;
    pairs(key, counter, cl, sl);
    cl = scale * cl;
    sl = scale * sl;
    if (c) std::memcpy(c + m, &cl, static_cast<std::size_t>(lanes) * sizeof(double));
    if (s) std::memcpy(s + m, &sl, static_cast<std::size_t>(lanes) * sizeof(double));
  }
}

}  // namespace chaosweep::run
