// The stochastic steppers (Euler-Maruyama, Heun) driven by the keyed Wiener increments:
// measured weak and strong orders against the exact solutions of geometric Brownian motion
// and the Ornstein-Uhlenbeck process, and the increments' own distribution.
//
// Every path of a test follows one Brownian path, drawn at the finest step; a coarser step's
// increment is the sum of its fine ones. The difference of the means at successive steps then
// cancels most of the sampling error, and the ratio of successive differences measures the
// order p (it tends to 2^p).
#include <gsl/gsl_cdf.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <vector>

#include "integrators/sde.hpp"
#include "numerics_fixtures.hpp"
#include "run/batch_work.hpp"
#include "run/forcing_noise.hpp"
#include "run/gaussian_lanes.hpp"
#include "run/member_noise.hpp"

namespace chaosweep::testing {
namespace {

using integrators::NoiseForm;
using integrators::SdeBatch;
using integrators::SdeMethod;

/// The scalar linear drift dx/dt = mu x (mu < 0 gives geometric Brownian motion with
/// multiplicative noise, the Ornstein-Uhlenbeck process with additive noise).
class Scalar final : public models::Model {
 public:
  explicit Scalar(double mu) : mu_(mu) {}
  int state_dim() const override { return 1; }
  const std::vector<models::ObservableInfo>& observables() const override { return obs_; }
  void rhs(const double* x, double* dxdt, int width) const override {
    for (int m = 0; m < width; ++m) dxdt[m] = mu_ * x[m];
  }
  double max_stable_dt() const override { return 1.0; }
  std::vector<double> default_initial_state() const override { return {1.0}; }

 private:
  double mu_;
  std::vector<models::ObservableInfo> obs_ = {{"x", "state"}};
};

constexpr int kPaths = 100000;
constexpr int kFinest = 64;  // fine steps to T = 1
constexpr double kT = 1.0;

/// Path m's fine increment k, N(0, T / kFinest), keyed like a member's forcing noise; drawn
/// once for all the tests ([k][m]).
double fine_increment(int m, int k) {
  static const std::vector<double> drawn = [] {
    std::vector<double> d(static_cast<std::size_t>(kFinest) * kPaths);
    for (int p = 0; p < kPaths; ++p) {
      const run::MemberNoise stream(2026, 0, p, 2);
      for (int j = 0; j < kFinest; ++j)
        d[static_cast<std::size_t>(j) * kPaths + p] =
            run::wiener_increment(stream, j, 1, 0, std::sqrt(kT / kFinest));
    }
    return d;
  }();
  return drawn[static_cast<std::size_t>(k) * kPaths + m];
}

struct Paths {
  std::vector<double> x;  // the end states, X(T) of every path
  std::vector<double> w;  // W(T) of every path
};

/// Every path from x0 to T in `steps` steps (a divisor of kFinest) of the given scheme.
Paths integrate(double mu, double sigma, SdeMethod method, NoiseForm form, int steps,
                double x0 = 1.0) {
  const Scalar model(mu);
  SdeBatch stepper(model, kPaths, method, form, {0});
  Paths out{std::vector<double>(kPaths, x0), std::vector<double>(kPaths, 0.0)};
  std::vector<double> dw(kPaths);
  const int per = kFinest / steps;
  for (int k = 0; k < steps; ++k) {
    for (int m = 0; m < kPaths; ++m) {
      double sum = 0.0;
      for (int j = 0; j < per; ++j) sum += fine_increment(m, k * per + j);
      dw[m] = sum;
      out.w[m] += sum;
    }
    stepper.step(out.x.data(), kT / steps, sigma, dw.data());
  }
  return out;
}

double mean(const std::vector<double>& v) {
  double s = 0.0;
  for (const double a : v) s += a;
  return s / static_cast<double>(v.size());
}

template <class F>
double mean_of(const Paths& p, F f) {
  double s = 0.0;
  for (int m = 0; m < kPaths; ++m) s += f(p.x[m], p.w[m]);
  return s / kPaths;
}

/// Observed order from three estimates at steps h, h/2, h/4: log2 of the ratio of the
/// successive differences.
double order(double at_h, double at_half, double at_quarter) {
  return std::log2((at_h - at_half) / (at_half - at_quarter));
}

// Exact: the Ito solution of dX = mu X dt + sigma X dW has mean X0 exp(mu t); Euler-Maruyama
// converges to it with weak order 1 (Gardiner, Handbook of Stochastic Methods, ch. 4 for the
// solution; Kloeden & Platen 1992, ch. 14 for the order).
TEST(Sde, EulerMaruyamaHasWeakOrderOneOnGeometricBrownianMotion) {
  const double mu = -1.0, sigma = 0.5;
  std::vector<double> m;
  for (const int steps : {8, 16, 32, 64}) {
    m.push_back(mean(integrate(mu, sigma, SdeMethod::euler_maruyama, NoiseForm::multiplicative,
                               steps).x));
  }
  EXPECT_NEAR(order(m[0], m[1], m[2]), 1.0, 0.15);
  EXPECT_NEAR(order(m[1], m[2], m[3]), 1.0, 0.25);
  // Richardson extrapolation of the two finest means against the Ito mean; the sampling
  // error of the mean is about sd / sqrt(paths) = 4e-4.
  EXPECT_NEAR(2.0 * m[3] - m[2], std::exp(mu * kT), 2e-3);
  EXPECT_GT(std::abs(m[0] - std::exp(mu * kT)), 1e-2);  // the error measured is the scheme's
}

// Exact: the Stratonovich solution of the same equation has mean X0 exp((mu + sigma^2/2) t)
// (Gardiner, ch. 4, the Ito-Stratonovich drift correction); the Heun scheme converges to it.
TEST(Sde, HeunConvergesToTheStratonovichMeanOfGeometricBrownianMotion) {
  const double mu = -1.0, sigma = 0.5;
  std::vector<double> m;
  for (const int steps : {8, 16, 32, 64}) {
    m.push_back(
        mean(integrate(mu, sigma, SdeMethod::heun, NoiseForm::multiplicative, steps).x));
  }
  const double stratonovich = std::exp((mu + 0.5 * sigma * sigma) * kT);
  EXPECT_NEAR(order(m[1], m[2], m[3]), 1.0, 0.25);
  // Richardson extrapolation; the sampling error of the mean is about 7e-4.
  EXPECT_NEAR(2.0 * m[3] - m[2], stratonovich, 3e-3);
  EXPECT_GT(std::abs(m[3] - std::exp(mu * kT)), 0.03);  // not the Ito mean, 0.049 away
}

// Exact: dX = -theta X dt + sigma dW from X0 has E X(t)^2 = X0^2 e^{-2 theta t} +
// sigma^2 / (2 theta) (1 - e^{-2 theta t}) (Gardiner, ch. 4, the Ornstein-Uhlenbeck process).
// Heun with additive noise has weak order 2, Euler-Maruyama weak order 1 (Kloeden & Platen).
// The steps are chosen where each scheme's error is already in its asymptotic regime.
TEST(Sde, HeunHasWeakOrderTwoForAdditiveNoise) {
  auto exact = [](double theta, double sigma) {
    return std::exp(-2.0 * theta * kT) +
           sigma * sigma / (2.0 * theta) * (1.0 - std::exp(-2.0 * theta * kT));
  };
  auto second_moment = [&](double theta, SdeMethod method, int steps) {
    return mean_of(integrate(-theta, 1.0, method, NoiseForm::additive, steps),
                   [](double x, double) { return x * x; });
  };
  std::vector<double> heun, em;
  for (const int steps : {4, 8, 16}) heun.push_back(second_moment(2.0, SdeMethod::heun, steps));
  for (const int steps : {16, 32, 64})
    em.push_back(second_moment(1.0, SdeMethod::euler_maruyama, steps));
  EXPECT_NEAR(order(heun[0], heun[1], heun[2]), 2.0, 0.3);
  EXPECT_NEAR(order(em[0], em[1], em[2]), 1.0, 0.2);
  // Richardson extrapolation against the exact moment; the sampling error is about 3e-3.
  EXPECT_NEAR((4.0 * heun[2] - heun[1]) / 3.0, exact(2.0, 1.0), 1e-2);
  EXPECT_NEAR(2.0 * em[2] - em[1], exact(1.0, 1.0), 1e-2);
}

// Exact pathwise solutions along the same Brownian path W: Ito X0 exp((mu - sigma^2/2) t +
// sigma W(t)), Stratonovich X0 exp(mu t + sigma W(t)) (Gardiner, ch. 4). Strong orders:
// Euler-Maruyama 1/2, Heun 1 for one noise (Kloeden & Platen 1992, ch. 10).
TEST(Sde, StrongOrdersOnGeometricBrownianMotion) {
  const double mu = -0.5, sigma = 1.0;
  auto strong_error = [&](SdeMethod method, int steps) {
    const double drift = method == SdeMethod::heun ? mu : mu - 0.5 * sigma * sigma;
    return mean_of(integrate(mu, sigma, method, NoiseForm::multiplicative, steps),
                   [&](double x, double w) { return std::abs(x - std::exp(drift * kT + sigma * w)); });
  };
  const double em16 = strong_error(SdeMethod::euler_maruyama, 16);
  const double em64 = strong_error(SdeMethod::euler_maruyama, 64);
  const double heun16 = strong_error(SdeMethod::heun, 16);
  const double heun64 = strong_error(SdeMethod::heun, 64);
  EXPECT_NEAR(0.5 * std::log2(em16 / em64), 0.5, 0.15);
  EXPECT_NEAR(0.5 * std::log2(heun16 / heun64), 1.0, 0.15);
}

// Exact identity of the schemes without noise: on dx/dt = mu x, forward Euler multiplies by
// (1 + mu h) per step and the trapezoid predictor-corrector by 1 + mu h + (mu h)^2 / 2.
TEST(Sde, WithoutNoiseTheSchemesAreEulerAndTheTrapezoidRule) {
  const Scalar model(-0.7);
  const double h = 0.1;
  for (const SdeMethod method : {SdeMethod::euler_maruyama, SdeMethod::heun}) {
    SdeBatch stepper(model, 3, method, NoiseForm::additive, {0});
    std::vector<double> x = {1.0, -2.0, 0.5};
    const std::vector<double> dw(3, 0.0);
    for (int k = 0; k < 10; ++k) stepper.step(x.data(), h, 0.3, dw.data());
    const double a = -0.7 * h;
    const double factor = method == SdeMethod::heun ? 1.0 + a + 0.5 * a * a : 1.0 + a;
    EXPECT_NEAR(x[0], std::pow(factor, 10), 1e-14);
    EXPECT_NEAR(x[1], -2.0 * std::pow(factor, 10), 1e-14);
  }
}

// The increments are N(0, dt): mean, variance and fourth moment (3 dt^2) within four standard
// errors, and a pure function of the key (seed, case, member, step, variable).
TEST(Sde, WienerIncrementsAreGaussianAndKeyed) {
  const run::MemberNoise stream(7, 3, 11, 2);
  const int n = 400000;
  const double dt = 0.01;
  double s1 = 0.0, s2 = 0.0, s4 = 0.0;
  for (int k = 0; k < n; ++k) {
    const double d = run::wiener_increment(stream, k / 2, 2, k % 2, std::sqrt(dt));
    s1 += d;
    s2 += d * d;
    s4 += d * d * d * d;
  }
  EXPECT_NEAR(s1 / n, 0.0, 4.0 * std::sqrt(dt / n));
  EXPECT_NEAR(s2 / n, dt, 4.0 * std::sqrt(2.0 / n) * dt);
  EXPECT_NEAR(s4 / n, 3.0 * dt * dt, 4.0 * std::sqrt(96.0 / n) * dt * dt);
  const run::MemberNoise again(7, 3, 11, 2), other_member(7, 3, 12, 2);
  EXPECT_EQ(run::wiener_increment(stream, 5, 2, 1, 0.1),
            run::wiener_increment(again, 5, 2, 1, 0.1));
  EXPECT_NE(run::wiener_increment(stream, 5, 2, 1, 0.1),
            run::wiener_increment(other_member, 5, 2, 1, 0.1));
  EXPECT_NE(run::wiener_increment(stream, 5, 2, 1, 0.1),
            run::wiener_increment(stream, 5, 2, 0, 0.1));
}

// The batched draw gives the single draws bitwise (4 noisy variables, and 3: a pair shared by
// consecutive steps); the two branches of a pair (variables 0 and 1) are uncorrelated: their
// sample correlation within four standard errors of 0 (1/sqrt(n)).
TEST(Sde, BatchedIncrementsEqualSingleOnesAndPairBranchesAreUncorrelated) {
  const run::MemberNoise stream(5, 1, 2, 2);
  for (int noisy : {4, 3}) {
    std::vector<double> out(static_cast<std::size_t>(noisy) * 3);
    for (std::int64_t k = 0; k < 50; ++k) {
      run::wiener_increments(stream, k, noisy, 0.1, out.data() + 1, 3);
      for (int r = 0; r < noisy; ++r) {
        EXPECT_EQ(out[1 + static_cast<std::size_t>(r) * 3],
                  run::wiener_increment(stream, k, noisy, r, 0.1));
      }
    }
  }
  const int n = 200000;
  double sxy = 0.0;
  for (int k = 0; k < n; ++k) {
    sxy += run::wiener_increment(stream, k, 2, 0, 1.0) * run::wiener_increment(stream, k, 2, 1, 1.0);
  }
  EXPECT_NEAR(sxy / n, 0.0, 4.0 / std::sqrt(static_cast<double>(n)));
}

// Exact by design: a batch's forcing (ForcingNoise, which draws whole rows of members and
// carries a pair's second branch to the next step) gives every column the keyed increment
// wiener_increment(stream (seed, key case, member, 2), step, noisy, r) bitwise, whether the
// steps come in order or jump (a resume, a twin's run); padding columns draw the first
// member's noise, a shared realisation member -1's. Three noisy variables of five (odd: pairs
// straddle steps), width 12 (not a multiple of a register).
TEST(Sde, ForcingNoiseGivesTheKeyedIncrementsInAnyOrder) {
  for (bool shared : {false, true}) {
    run::Setup s;
    s.method = "heun";
    s.state_dim = 5;
    s.width = 12;
    s.dt = 0.01;
    s.seed = 9;
    s.key_case = 4;
    s.noise.kind = spec::NoiseKind::additive;
    s.noise.amplitude = 1.5;
    s.noise.variables = {0, 2, 3};
    s.noise.shared = shared;
    run::ForcingNoise forcing(s, s.width, {100, 10});
    for (std::int64_t step : {0, 1, 2, 3, 7, 8, 3, 4, 0, 5}) {
      const integrators::StepNoise noise = forcing.at(step);
      EXPECT_EQ(noise.a0, 1.5);
      for (int m = 0; m < s.width; ++m) {
        const std::int64_t member = shared ? -1 : 100 + (m < 10 ? m : 0);
        const run::MemberNoise stream(9, 4, member, 2);
        for (int r = 0; r < 3; ++r) {
          EXPECT_EQ(noise.dw0[r * s.width + m], run::wiener_increment(stream, step, 3, r, std::sqrt(s.dt)))
              << "step " << step << " column " << m << " row " << r;
        }
      }
    }
  }
}

// Every lane's pair against the long double reference on its stream's words. Tolerance: a few
// ulp (2^-52 = 2.2e-16) of r (up to 8.5) for the log's and square root's rounding, plus a few
// ulp of 1 for the sine and cosine.
TEST(Sde, BoxMullerPairsAgreeWithTheCLibrary) {
  for (std::uint64_t k = 0; k < 4000; ++k) {
    const run::MemberNoise stream(11, static_cast<std::int64_t>(k % 7), static_cast<std::int64_t>(k), 2);
    for (std::uint64_t j = 0; j < 25; ++j) {
      const ReferencePair ref = reference_pair(stream.bits(2 * j), stream.bits(2 * j + 1));
      double c = 0.0, s = 0.0;
      run::gaussian_pair(stream.key(), j, 1.0, c, s);
      const double tol = 6.7e-16 * (static_cast<double>(ref.r) + 1.0);  // 3 ulp
      ASSERT_NEAR(c, static_cast<double>(ref.c), tol) << "key " << k << " pair " << j;
      ASSERT_NEAR(s, static_cast<double>(ref.s), tol) << "key " << k << " pair " << j;
    }
  }
}

// The same comparison at chosen words: u1 at both ends of (0, 1] (2^-52: the largest radius,
// 8.49; 1: radius 0) and near 1/2, the angle at both ends of [-pi/4, pi/4) and at 0, under
// each of the eight symmetries (against long double logl/cosl/sinl; 3 ulp of r + 1 as above).
TEST(Sde, BoxMullerPairsAtTheEndsOfTheRanges) {
  const std::uint64_t top = ~std::uint64_t{0};
  const std::uint64_t half = std::uint64_t{1} << 63;
  const std::uint64_t low51 = (std::uint64_t{1} << 51) - 1, sign51 = std::uint64_t{1} << 50;
  for (std::uint64_t w1 : {std::uint64_t{0}, std::uint64_t{1} << 12, half, half - 1, top - (std::uint64_t{1} << 12), top}) {
    for (std::uint64_t angle : {std::uint64_t{0}, std::uint64_t{1}, sign51 - 1, sign51, sign51 + 1, low51}) {
      for (std::uint64_t symmetry = 0; symmetry < 8; ++symmetry) {
        const std::uint64_t w2 = (symmetry << 61) | (std::uint64_t{0x155} << 51) | angle;
        const ReferencePair ref = reference_pair(w1, w2);
        double c = 0.0, s = 0.0;
        run::gaussian_from_words(w1, w2, c, s);
        const double tol = 6.7e-16 * (static_cast<double>(ref.r) + 1.0);
        EXPECT_NEAR(c, static_cast<double>(ref.c), tol) << w1 << " " << w2;
        EXPECT_NEAR(s, static_cast<double>(ref.s), tol) << w1 << " " << w2;
      }
    }
  }
}

// The draws' distribution: the cosine and sine branches of 2e5 pairs (one per member stream)
// each pass the Kolmogorov-Smirnov test against GSL's standard normal CDF, and the pair's
// angle atan2(s, c) against the uniform distribution on (-pi, pi], at the 1 percent level
// (critical value 1.628 / sqrt(n), the asymptotic Kolmogorov distribution; common practice).
// An angle that covered part of the circle twice, or a radius off by a factor, fails.
TEST(Sde, BoxMullerDrawsPassKolmogorovSmirnov) {
  const int n = 200000;
  std::vector<double> c(n), s(n), angle(n);
  for (int m = 0; m < n; ++m) {
    run::gaussian_pair(run::MemberNoise(5, 2, m, 2).key(), 7, 1.0, c[static_cast<std::size_t>(m)],
                       s[static_cast<std::size_t>(m)]);
    angle[static_cast<std::size_t>(m)] =
        std::atan2(s[static_cast<std::size_t>(m)], c[static_cast<std::size_t>(m)]);
  }
  const auto ks = [n](std::vector<double> x, auto cdf) {
    std::sort(x.begin(), x.end());
    double d = 0.0;
    for (int i = 0; i < n; ++i) {
      const double f = cdf(x[static_cast<std::size_t>(i)]);
      d = std::max({d, f - static_cast<double>(i) / n, static_cast<double>(i + 1) / n - f});
    }
    return d;
  };
  const double critical = 1.628 / std::sqrt(static_cast<double>(n));
  const auto normal = [](double x) { return gsl_cdf_ugaussian_P(x); };
  const auto uniform = [](double a) { return (a + M_PI) / (2.0 * M_PI); };
  EXPECT_LT(ks(c, normal), critical);
  EXPECT_LT(ks(s, normal), critical);
  EXPECT_LT(ks(angle, uniform), critical);
}

// Each lane's pair depends only on its own key and counter (element-wise by design): rows of
// every length 1 .. 3 kLanes + 1, at any offset, equal the one-lane draws bitwise, and so do
// runs of consecutive pairs of one stream (gaussian_stream, a shared realisation's draws).
TEST(Sde, GaussianRowsEqualSingleDrawsBitwise) {
  std::vector<std::uint64_t> keys;
  for (int m = 0; m < 40; ++m) keys.push_back(run::MemberNoise(3, 1, m, 2).key());
  for (int n = 1; n <= 3 * integrators::kLanes + 1; ++n) {
    for (int first : {0, 1, 5}) {
      std::vector<double> c(static_cast<std::size_t>(n)), s(static_cast<std::size_t>(n));
      run::gaussian_row(keys.data() + first, n, 17, 0.25, c.data(), s.data());
      for (int m = 0; m < n; ++m) {
        double c1 = 0.0, s1 = 0.0;
        run::gaussian_pair(keys[static_cast<std::size_t>(first + m)], 17, 0.25, c1, s1);
        EXPECT_EQ(c[static_cast<std::size_t>(m)], c1);
        EXPECT_EQ(s[static_cast<std::size_t>(m)], s1);
      }
      run::gaussian_stream(keys[static_cast<std::size_t>(first)], 40 + first, n, 0.5, c.data(),
                           s.data());
      for (int i = 0; i < n; ++i) {
        double c1 = 0.0, s1 = 0.0;
        run::gaussian_pair(keys[static_cast<std::size_t>(first)], 40 + first + i, 0.5, c1, s1);
        EXPECT_EQ(c[static_cast<std::size_t>(i)], c1);
        EXPECT_EQ(s[static_cast<std::size_t>(i)], s1);
      }
    }
  }
}

}  // namespace
}  // namespace chaosweep::testing

namespace chaosweep::testing {
namespace {

// The tangent step is the derivative of the step's map with the noise fixed (exact identity:
// the definition of the derivative): on Lorenz-63 with multiplicative noise on x and z, for
// both schemes, D Phi(x) v against the central difference (Phi(x + e v) - Phi(x - e v)) / 2e
// (error O(e^2), rounding O(1e-16 / e): e = 1e-5 gives about 1e-8 relative), and the state
// advanced bitwise as step() advances it.
TEST(Sde, TangentStepIsTheDerivativeOfTheStepMap) {
  const auto model = make_model("lorenz63", {});
  const int width = 4, n = 3;
  const double dt = 0.01, e = 1e-5;
  const std::vector<double> start = {1.0, -3.0, 2.5, 0.2, 4.0, 7.0, -1.5, 9.0,
                                     20.0, 25.0, 18.0, 30.0};  // [3][4]
  const std::vector<double> dw0 = {0.1, -0.05, 0.02, 0.08, -0.1, 0.03, 0.07, -0.02};  // [2][4]
  const std::vector<double> dw1 = {0.05, 0.01, -0.04, 0.06, 0.02, -0.08, 0.03, 0.01};
  const integrators::StepNoise noise{0.7, 0.9, dw0.data(), dw1.data()};
  const std::vector<double> v = {0.3, -0.2, 0.5, 1.0, 0.1, 0.4, -0.7, 0.2, 0.6, -0.1, 0.9, 0.3};
  for (const SdeMethod method : {SdeMethod::euler_maruyama, SdeMethod::heun}) {
    SdeBatch stepper(*model, width, method, NoiseForm::multiplicative, {0, 2});
    std::vector<double> x = start, tangent = v, plain = start;
    stepper.step_tangent(x.data(), tangent.data(), 1, dt, noise, 0.0, dt, nullptr);
    stepper.step(plain.data(), dt, noise);
    EXPECT_EQ(x, plain);
    std::vector<double> up(start), down(start);
    for (int i = 0; i < n * width; ++i) {
      up[i] += e * v[i];
      down[i] -= e * v[i];
    }
    stepper.step(up.data(), dt, noise);
    stepper.step(down.data(), dt, noise);
    for (int i = 0; i < n * width; ++i) {
      const double difference = (up[i] - down[i]) / (2.0 * e);
      EXPECT_NEAR(tangent[i], difference, 1e-7 * (1.0 + std::abs(difference))) << i;
    }
  }
}

}  // namespace
}  // namespace chaosweep::testing
