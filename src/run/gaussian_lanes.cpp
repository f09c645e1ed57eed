// Box-Muller pairs on Lanes; see gaussian_lanes.hpp. Compiled with -ffp-contract=off and
// -fno-math-errno (src/run/CMakeLists.txt): a multiply-add is fused only where fmadd() says so
// and every other a * b + c is rounded twice, whatever the compiler would fuse, so the bits do
// not depend on how a caller's loop is vectorised or inlined. fmadd() is one fused operation
// with AVX2 + FMA and with AVX-512 alike, so those builds draw the same bits.
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

/// The counter offset (j + 1) golden of register g: one for every lane (a scalar counter) or
/// one per lane (a register of counters per g).
inline std::uint64_t offset(std::uint64_t j, int) { return (j + 1) * kGolden; }
template <int G>
inline KeyLanes offset(const Keys<G>& j, int g) { return (j.v[g] + 1) * kGolden; }

/// Draw j of each lane's stream, mix64(key + (j + 1) golden): 64 random bits. J: one counter
/// for every lane, or Keys<G> of counters.
template <int G, typename J>
inline Keys<G> words(const Keys<G>& key, const J& j) {
  Keys<G> bits;
  for (int g = 0; g < G; ++g) bits.v[g] = key.v[g] + offset(j, g);
  return mix64(bits);
}

/// Correctly rounded square root of every lane (the IEEE-754 operation; the translation unit
/// is compiled with -fno-math-errno, so the loop becomes vector square roots).
inline Lanes sqrt_lanes(Lanes v) {
  Lanes r;
  for (int l = 0; l < L; ++l) r[l] = __builtin_sqrt(v[l]);
  return r;
}

/// scale sqrt(-2 ln u) for u = 1 - (w >> 12) 2^-52 in [2^-52, 1] from the word w: v = 1 + (w >> 12)
/// 2^-52 in [1, 2) by setting the exponent bits, u = 2 - v (exact). u = 2^e m with m in
/// (sqrt(1/2), sqrt(2)], f = m - 1 (exact), s = f / (2 + f), and ln m = 2 atanh s
/// = 2 s (1 + z p(z)) with z = s^2 <= (3 - 2 sqrt(2))^2 < 0.0295 and p the degree-6 Chebyshev
/// interpolant of (atanh(s)/s - 1)/z on [0, 0.0295] (coefficients computed for this file in
/// 40-digit arithmetic; interpolation error 1.6e-16 of p). -2 ln m = s P(z) with P = -4 - 4 z p
/// by Horner's rule (the coefficients times -4, exact), and -2 ln u = e (-2 ln 2) + s P(z),
/// the product e (-2 ln 2) exact inside the fused multiply-add; ln 2's rounding (1e-17 relative)
/// and the three roundings keep -2 ln u within about an ulp.
template <int G>
inline Doubles<G> box_muller_radius(const Keys<G>& w, double scale) {
  constexpr double kLn2 = 6.93147180559945309417e-01;
  constexpr std::int64_t kAboveHalfSqrt2 = 0x3fe6a09e667f3bce;  // bits of the double after sqrt(1/2)
  constexpr std::uint64_t kOne = 0x3ff0000000000000;              // bits of 1.0
  Doubles<G> s, z, ed;
  for (int g = 0; g < G; ++g) {
    const Lanes u = 2.0 - reinterpret_cast<Lanes>((w.v[g] >> 12) | kOne);
    // the exponent e counted from the double just above sqrt(1/2): m = u 2^-e lands in
    // (sqrt(1/2), sqrt(2)] (bounds the nearest doubles) by integer operations alone
    const LaneInts b = reinterpret_cast<LaneInts>(u);
    const LaneInts e = (b - kAboveHalfSqrt2) >> 52;
    const Lanes m = reinterpret_cast<Lanes>(b - (e << 52));
    const Lanes f = m - 1.0;
    s.v[g] = f / (2.0 + f);
    z.v[g] = s.v[g] * s.v[g];
    ed.v[g] = __builtin_convertvector(e, Lanes);
  }
  Doubles<G> p;
  for (int g = 0; g < G; ++g) p.v[g] = Lanes{} + -4.0 * 0.07308224842521703;
  horner(p, z, -4.0 * 0.07665860800278021);
  horner(p, z, -4.0 * 0.09091444562630861);
  horner(p, z, -4.0 * 0.1111110556739754);
  horner(p, z, -4.0 * 0.14285714312987743);
  horner(p, z, -4.0 * 0.19999999999949752);
  horner(p, z, -4.0 * 0.3333333333333335);
  horner(p, z, -4.0);
  Doubles<G> r;
  for (int g = 0; g < G; ++g) {
    const Lanes minus_two_ln_u = fmadd(ed.v[g], Lanes{} - 2.0 * kLn2, s.v[g] * p.v[g]);
    r.v[g] = scale * sqrt_lanes(minus_two_ln_u);
  }
  return r;
}

/// A uniform point (c, s) on the unit circle from the word w: theta = 2 pi y 2^-53 with y the
/// low 51 bits of w as a signed integer in [-2^50, 2^50) (exact; one rounding of the product),
/// so theta is uniform in [-pi/4, pi/4), and (cos theta, sin theta) then carried by one of the
/// square's eight symmetries, chosen by w's top three bits: bit 61 swaps the two, bit 63 negates
/// c, bit 62 negates s. The eight images of [-pi/4, pi/4) tile the circle, so the angle is
/// uniform on [0, 2 pi). On [-pi/4, pi/4], sin theta = theta + theta z q_s(z) and
/// cos theta = 1 + z q_c(z), z = theta^2, with q_s and q_c the degree-5 and degree-6 Chebyshev
/// interpolants of (sin(t)/t - 1)/z and (cos(t) - 1)/z on [0, (pi/4)^2] (computed for this file
/// in 40-digit arithmetic; interpolation errors 2e-17 and 2e-19).
template <int G>
inline void unit_circle(const Keys<G>& w, Doubles<G>& c, Doubles<G>& s) {
  constexpr double kTwoPiUlp = 6.283185307179586476925286766559 * 0x1p-53;  // exact scaling
  constexpr std::uint64_t kSign = std::uint64_t{1} << 63;
  Doubles<G> t, z;
  for (int g = 0; g < G; ++g) {
    const LaneInts y = reinterpret_cast<LaneInts>(w.v[g] << 13) >> 13;
    t.v[g] = __builtin_convertvector(y, Lanes) * kTwoPiUlp;
    z.v[g] = t.v[g] * t.v[g];
  }
  Doubles<G> pc, ps;
  for (int g = 0; g < G; ++g) pc.v[g] = Lanes{} - 1.1367998654022494e-11;
  horner(pc, z, 2.0875886738047052e-09);
  horner(pc, z, -2.7557315566341895e-07);
  horner(pc, z, 2.480158729369346e-05);
  horner(pc, z, -0.0013888888888880775);
  horner(pc, z, 0.04166666666666664);
  horner(pc, z, -0.5);
  horner(pc, z, 1.0);
  for (int g = 0; g < G; ++g) ps.v[g] = Lanes{} + 1.5918129294866608e-10;
  horner(ps, z, -2.5051131845003624e-08);
  horner(ps, z, 2.755731610255244e-06);
  horner(ps, z, -0.00019841269836758574);
  horner(ps, z, 0.008333333333330948);
  horner(ps, z, -0.16666666666666666);
  for (int g = 0; g < G; ++g) ps.v[g] = fmadd(t.v[g], z.v[g] * ps.v[g], t.v[g]);
  for (int g = 0; g < G; ++g) {  // signs flipped by xor
    const KeyLanes c_sign = w.v[g] & kSign, s_sign = (w.v[g] << 1) & kSign;
    const LaneInts swap = (w.v[g] & (kSign >> 2)) != 0;
    const Lanes cs = swap ? ps.v[g] : pc.v[g], sn = swap ? pc.v[g] : ps.v[g];
    c.v[g] = reinterpret_cast<Lanes>(reinterpret_cast<KeyLanes>(cs) ^ c_sign);
    s.v[g] = reinterpret_cast<Lanes>(reinterpret_cast<KeyLanes>(sn) ^ s_sign);
  }
}

/// The pairs of G registers of streams: c and s the two branches, scale r cos and scale r sin.
/// P: one pair index for every lane, or Keys<G> of pair indices.
inline std::uint64_t first_draw(std::uint64_t pair) { return 2 * pair; }
template <int G>
inline Keys<G> first_draw(Keys<G> pair) {
  for (int g = 0; g < G; ++g) pair.v[g] = 2 * pair.v[g];
  return pair;
}
inline std::uint64_t second_draw(std::uint64_t j) { return j + 1; }
template <int G>
inline Keys<G> second_draw(Keys<G> j) {
  for (int g = 0; g < G; ++g) j.v[g] = j.v[g] + 1;
  return j;
}

template <int G, typename P>
inline void pairs(const Keys<G>& key, const P& pair, double scale, Doubles<G>& c,
                  Doubles<G>& s) {
  const P j = first_draw(pair);
  const Doubles<G> r = box_muller_radius(words(key, j), scale);
  Doubles<G> cos_u, sin_u;
  unit_circle(words(key, second_draw(j)), cos_u, sin_u);
  for (int g = 0; g < G; ++g) {
    c.v[g] = r.v[g] * cos_u.v[g];
    s.v[g] = r.v[g] * sin_u.v[g];
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
  pairs<G>(key, pair, scale, cl, sl);
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

void gaussian_pair(std::uint64_t key, std::uint64_t pair, double scale, double& c, double& s) {
  Doubles<1> cl, sl;
  pairs<1>(Keys<1>{{KeyLanes{} + key}}, pair, scale, cl, sl);
  c = cl.v[0][0];
  s = sl.v[0][0];
}

void gaussian_stream(std::uint64_t key, std::uint64_t first_pair, int count, double scale,
                     double* c, double* s) {
  const Keys<1> k{{KeyLanes{} + key}};
  for (int i = 0; i < count; i += L) {
    Keys<1> pair;
    for (int l = 0; l < L; ++l) pair.v[0][l] = first_pair + static_cast<std::uint64_t>(i + l);
    Doubles<1> cl, sl;
    pairs<1>(k, pair, scale, cl, sl);
    const int n = count - i < L ? count - i : L;
    std::memcpy(c + i, &cl.v[0], static_cast<std::size_t>(n) * sizeof(double));
    std::memcpy(s + i, &sl.v[0], static_cast<std::size_t>(n) * sizeof(double));
  }
}

void gaussian_from_words(std::uint64_t w1, std::uint64_t w2, double& c, double& s) {
  const Doubles<1> r = box_muller_radius(Keys<1>{{KeyLanes{} + w1}}, 1.0);
  Doubles<1> cos_u, sin_u;
  unit_circle(Keys<1>{{KeyLanes{} + w2}}, cos_u, sin_u);
  c = (r.v[0] * cos_u.v[0])[0];
  s = (r.v[0] * sin_u.v[0])[0];
}

void gaussian_row(const std::uint64_t* keys, int n, std::uint64_t pair, double scale, double* c,
                  double* s) {
  row(keys, n, pair, scale, c, s);
}

}  // namespace chaosweep::run
