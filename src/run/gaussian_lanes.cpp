// Box-Muller pairs on Lanes; see gaussian_lanes.hpp. Compiled with -ffp-contract=off and
// -fno-math-errno (src/run/CMakeLists.txt): every a * b + c here is rounded twice, whatever the
// compiler would fuse, so the bits do not depend on how a caller's loop is vectorised or
// inlined.
#include "run/gaussian_lanes.hpp"

#include <cstring>

#if defined(__AVX__)
#include <immintrin.h>
#endif

namespace chaosweep::run {
namespace {

using integrators::LaneInts;
using integrators::Lanes;
constexpr int L = integrators::kLanes;

constexpr std::uint64_t kGolden = 0x9e3779b97f4a7c15ULL;  // as in member_noise.cpp

/// G registers of values computed side by side: every function below works on G independent
/// Lanes at once, one operation for all of them before the next, so that their dependency
/// chains (the polynomials) overlap instead of waiting on each other.
template <typename V, int G>
struct Pack {
  V v[G];
};
template <int G> using Doubles = Pack<Lanes, G>;
template <int G> using Keys = Pack<KeyLanes, G>;
template <int G> using Ints = Pack<LaneInts, G>;

/// a b + c rounded once where the build has fused multiply-add (explicitly, not left to the
/// compiler), a b then + c otherwise.
inline Lanes fmadd(Lanes a, Lanes b, Lanes c) {
#if defined(__AVX512F__)
  return reinterpret_cast<Lanes>(_mm512_fmadd_pd(reinterpret_cast<__m512d>(a),
                                                 reinterpret_cast<__m512d>(b),
                                                 reinterpret_cast<__m512d>(c)));
#elif defined(__AVX__) && defined(__FMA__)
  return reinterpret_cast<Lanes>(_mm256_fmadd_pd(reinterpret_cast<__m256d>(a),
                                                 reinterpret_cast<__m256d>(b),
                                                 reinterpret_cast<__m256d>(c)));
#else
  return a * b + c;
#endif
}

/// p z + c for every register (one Horner step).
template <int G>
inline void horner(Doubles<G>& p, const Doubles<G>& z, double c) {
  for (int g = 0; g < G; ++g) p.v[g] = fmadd(p.v[g], z.v[g], Lanes{} + c);
}

/// SplitMix64's output mixing function, lane by lane (member_noise.cpp's mix64).
template <int G>
inline Keys<G> mix64(Keys<G> z) {
  for (int g = 0; g < G; ++g) z.v[g] = (z.v[g] ^ (z.v[g] >> 30)) * 0xbf58476d1ce4e5b9ULL;
  for (int g = 0; g < G; ++g) z.v[g] = (z.v[g] ^ (z.v[g] >> 27)) * 0x94d049bb133111ebULL;
  for (int g = 0; g < G; ++g) z.v[g] = z.v[g] ^ (z.v[g] >> 31);
  return z;
}

/// Draw j of each lane's stream as a double in [0, 1): the top 53 bits of
/// mix64(key + (j + 1) golden) times 2^-53 (an exact conversion: < 2^53).
template <int G>
inline Doubles<G> unit(const Keys<G>& key, KeyLanes j) {
  Keys<G> bits;
  for (int g = 0; g < G; ++g) bits.v[g] = key.v[g] + (j + 1) * kGolden;
  bits = mix64(bits);
  Doubles<G> u;
  for (int g = 0; g < G; ++g) {
    u.v[g] = __builtin_convertvector(__builtin_convertvector(bits.v[g] >> 11, LaneInts), Lanes) *
             0x1p-53;
  }
  return u;
}

/// Correctly rounded square root of every lane (the IEEE-754 operation; the translation unit
/// is compiled with -fno-math-errno, so the loop becomes vector square roots).
inline Lanes sqrt_lanes(Lanes v) {
  Lanes r;
  for (int l = 0; l < L; ++l) r[l] = __builtin_sqrt(v[l]);
  return r;
}

/// sqrt(-2 ln u) for u in [2^-53, 1] (normal numbers). u = 2^e m with m in [sqrt(1/2),
/// sqrt(2)), f = m - 1 (exact), s = f / (2 + f), and ln m = 2 atanh s = 2 (s + s^3/3 + ...):
/// |s| <= 3 - 2 sqrt(2) < 0.1716, so s^2 <= 0.0295 and the series stops after s^21/21, where
/// the next term is below 2^-56 of the first. ln u = e ln2_hi + (e ln2_lo + ln m), with ln 2
/// split so that e ln2_hi is exact for |e| < 2^11 (ln2_hi has 32 significant bits).
template <int G>
inline Doubles<G> box_muller_radius(const Doubles<G>& u) {
  constexpr double kLn2Hi = 6.93147180369123816490e-01;
  constexpr double kLn2Lo = 1.90821492927058770002e-10;
  constexpr double kSqrt2 = 1.41421356237309504880;
  Doubles<G> s, z, ed;
  for (int g = 0; g < G; ++g) {
    const KeyLanes b = reinterpret_cast<KeyLanes>(u.v[g]);
    LaneInts e = __builtin_convertvector(b >> 52, LaneInts) - 1023;
    Lanes m = reinterpret_cast<Lanes>((b & 0x000fffffffffffffULL) | 0x3ff0000000000000ULL);
    const LaneInts big = m > kSqrt2;  // -1 where m is in [sqrt 2, 2): halve it
    m = big ? m * 0.5 : m;
    e -= big;
    const Lanes f = m - 1.0;
    s.v[g] = f / (2.0 + f);
    z.v[g] = s.v[g] * s.v[g];
    ed.v[g] = __builtin_convertvector(e, Lanes);
  }
  Doubles<G> p;
  for (int g = 0; g < G; ++g) p.v[g] = Lanes{} + 1.0 / 21.0;
  horner(p, z, 1.0 / 19.0);
  horner(p, z, 1.0 / 17.0);
  horner(p, z, 1.0 / 15.0);
  horner(p, z, 1.0 / 13.0);
  horner(p, z, 1.0 / 11.0);
  horner(p, z, 1.0 / 9.0);
  horner(p, z, 1.0 / 7.0);
  horner(p, z, 1.0 / 5.0);
  horner(p, z, 1.0 / 3.0);
  Doubles<G> r;
  for (int g = 0; g < G; ++g) {
    const Lanes two_s = 2.0 * s.v[g];
    const Lanes ln_m = fmadd(two_s, z.v[g] * p.v[g], two_s);
    const Lanes ln_u = fmadd(ed.v[g], Lanes{} + kLn2Hi, fmadd(ed.v[g], Lanes{} + kLn2Lo, ln_m));
    r.v[g] = sqrt_lanes(-2.0 * ln_u);
  }
  return r;
}

/// cos(2 pi u) and sin(2 pi u) for u in [0, 1). q = round(4u), y = u - q/4 in
/// [-1/8, 1/8] (both exact), theta = 2 pi y in [-pi/4, pi/4], where the Taylor series of sin
/// to theta^17 and of cos to theta^18 leave terms below 2^-53 of the result; then the quadrant
/// q mod 4 swaps and negates them (cos(q pi/2 + theta), sin(q pi/2 + theta)).
template <int G>
inline void sincos_turn(const Doubles<G>& u, Doubles<G>& c, Doubles<G>& s) {
  constexpr double kTwoPi = 6.283185307179586476925286766559;
  Doubles<G> t, z;
  Ints<G> quadrant;
  for (int g = 0; g < G; ++g) {
    const LaneInts q = __builtin_convertvector(u.v[g] * 4.0 + 0.5, LaneInts);  // truncation: >= 0
    const Lanes y = u.v[g] - __builtin_convertvector(q, Lanes) * 0.25;
    t.v[g] = y * kTwoPi;
    z.v[g] = t.v[g] * t.v[g];
    quadrant.v[g] = q & 3;
  }
  // cos t = 1 + z (-1/2! + z (1/4! - ...)), sin t = t + t z (-1/3! + z (1/5! - ...))
  Doubles<G> pc, ps;
  for (int g = 0; g < G; ++g) pc.v[g] = Lanes{} - 1.0 / 6402373705728000.0;  // 1/18!
  horner(pc, z, 1.0 / 20922789888000.0);                                    // 1/16!
  horner(pc, z, -1.0 / 87178291200.0);                                      // 1/14!
  horner(pc, z, 1.0 / 479001600.0);                                         // 1/12!
  horner(pc, z, -1.0 / 3628800.0);                                          // 1/10!
  horner(pc, z, 1.0 / 40320.0);                                             // 1/8!
  horner(pc, z, -1.0 / 720.0);                                              // 1/6!
  horner(pc, z, 1.0 / 24.0);                                                // 1/4!
  horner(pc, z, -0.5);                                                      // 1/2!
  horner(pc, z, 1.0);
  for (int g = 0; g < G; ++g) ps.v[g] = Lanes{} + 1.0 / 355687428096000.0;  // 1/17!
  horner(ps, z, -1.0 / 1307674368000.0);                                    // 1/15!
  horner(ps, z, 1.0 / 6227020800.0);                                        // 1/13!
  horner(ps, z, -1.0 / 39916800.0);                                         // 1/11!
  horner(ps, z, 1.0 / 362880.0);                                            // 1/9!
  horner(ps, z, -1.0 / 5040.0);                                             // 1/7!
  horner(ps, z, 1.0 / 120.0);                                               // 1/5!
  horner(ps, z, -1.0 / 6.0);                                                // 1/3!
  for (int g = 0; g < G; ++g) ps.v[g] = fmadd(t.v[g], z.v[g] * ps.v[g], t.v[g]);
  for (int g = 0; g < G; ++g) {
    const LaneInts swap = (quadrant.v[g] & 1) != 0;
    const LaneInts c_neg = (quadrant.v[g] == 1) | (quadrant.v[g] == 2);
    const LaneInts s_neg = quadrant.v[g] >= 2;
    const Lanes cs = swap ? ps.v[g] : pc.v[g], sn = swap ? pc.v[g] : ps.v[g];
    c.v[g] = c_neg ? -cs : cs;
    s.v[g] = s_neg ? -sn : sn;
  }
}

/// The pairs of G registers of streams: c and s the two branches times `scale`.
template <int G>
inline void pairs(const Keys<G>& key, KeyLanes pair, double scale, Doubles<G>& c,
                  Doubles<G>& s) {
  const KeyLanes j = 2 * pair;
  Doubles<G> u1 = unit(key, j);
  for (int g = 0; g < G; ++g) u1.v[g] = 1.0 - u1.v[g];
  const Doubles<G> u2 = unit(key, j + 1);
  const Doubles<G> r = box_muller_radius(u1);
  Doubles<G> cos_u, sin_u;
  sincos_turn<G>(u2, cos_u, sin_u);
  for (int g = 0; g < G; ++g) {
    c.v[g] = scale * (r.v[g] * cos_u.v[g]);
    s.v[g] = scale * (r.v[g] * sin_u.v[g]);
  }
}

/// gaussian_row for G whole registers of keys at keys[0 ..], then stored.
template <int G>
inline void row_block(const std::uint64_t* keys, int lanes, std::uint64_t pair, double scale,
                      double* c, double* s) {
  Keys<G> key;
  for (int g = 0; g < G; ++g) {
    key.v[g] = KeyLanes{} + keys[0];  // a short last block repeats the row's first key
    const int n = lanes - g * L < L ? lanes - g * L : L;
    std::memcpy(&key.v[g], keys + g * L, static_cast<std::size_t>(n) * sizeof(std::uint64_t));
  }
  Doubles<G> cl, sl;
  pairs<G>(key, KeyLanes{} + pair, scale, cl, sl);
  for (int g = 0; g < G; ++g) {
    const int n = lanes - g * L < L ? lanes - g * L : L;
    if (c) std::memcpy(c + g * L, &cl.v[g], static_cast<std::size_t>(n) * sizeof(double));
    if (s) std::memcpy(s + g * L, &sl.v[g], static_cast<std::size_t>(n) * sizeof(double));
  }
}

void row(const std::uint64_t* keys, int n, std::uint64_t pair, double scale, double* c,
         double* s) {
  constexpr int kGroup = 4;  // registers side by side
  int m = 0;
  for (; m + kGroup * L <= n; m += kGroup * L) {
    row_block<kGroup>(keys + m, kGroup * L, pair, scale, c ? c + m : c, s ? s + m : s);
  }
  for (; m < n; m += L) {
    row_block<1>(keys + m, n - m < L ? n - m : L, pair, scale, c ? c + m : c,
                       s ? s + m : s);
  }
}

}  // namespace

void gaussian_pairs(KeyLanes key, KeyLanes pair, Lanes& c, Lanes& s) {
  Doubles<1> cl, sl;
  pairs<1>(Keys<1>{{key}}, pair, 1.0, cl, sl);
  c = cl.v[0];
  s = sl.v[0];
}

void gaussian_pair(std::uint64_t key, std::uint64_t pair, double& c, double& s) {
  Lanes cl, sl;
  gaussian_pairs(KeyLanes{} + key, KeyLanes{} + pair, cl, sl);
  c = cl[0];
  s = sl[0];
}

void gaussian_row(const std::uint64_t* keys, int n, std::uint64_t pair, double scale, double* c,
                  double* s) {
  row(keys, n, pair, scale, c, s);
}

}  // namespace chaosweep::run
