// Model tests: conformance of every registered model, and exact properties of the equations of
// lorenz63 and lorenz96.
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <set>
#include <string>
#include <tuple>

#include "integrators/rk4.hpp"
#include "numerics_fixtures.hpp"

namespace chaosweep::testing {
namespace {

constexpr double kEps = std::numeric_limits<double>::epsilon();

// ---- conformance: every model in the registry, no edit needed for a new one ----------------

class ModelConformance : public ::testing::TestWithParam<std::string> {};

TEST_P(ModelConformance, DefaultsBuildAndAreInRange) {
  const models::ModelInfo& info = model_info(GetParam());
  EXPECT_EQ(info.name, GetParam());
  EXPECT_FALSE(info.description.empty());
  for (const models::ParameterInfo& p : info.parameters) {
    ASSERT_FALSE(p.default_value.empty()) << p.name;
    for (double v : p.default_value) {
      EXPECT_GE(v, p.min) << p.name;
      EXPECT_LE(v, p.max) << p.name;
      if (p.integer) {
        EXPECT_EQ(v, std::round(v)) << p.name;
      }
    }
  }
  const models::ParameterValues values = models::complete_parameters(info, {});
  const auto model = info.make(values);
  ASSERT_NE(model, nullptr);
  EXPECT_EQ(info.state_dim(values), model->state_dim());
  EXPECT_EQ(model->default_initial_state().size(), static_cast<std::size_t>(model->state_dim()));
}

TEST_P(ModelConformance, ObservablesStartWithTheStateAndAreUnique) {
  const auto model = make_model(GetParam());
  const auto& obs = model->observables();
  ASSERT_GE(obs.size(), static_cast<std::size_t>(model->state_dim()));
  std::set<std::string> names;
  for (const auto& o : obs) {
    EXPECT_FALSE(o.name.empty());
    EXPECT_TRUE(names.insert(o.name).second) << "duplicate observable " << o.name;
  }
}

// Exact (interface contract, model.hpp): the value for member m depends on column m only, so a
// batch of 8 equals each member evaluated alone at width 1, bit for bit, and a member placed at
// another column of a wider batch gives the same bits.
TEST_P(ModelConformance, RhsAndDerivedAreColumnIndependent) {
  const auto model = make_model(GetParam());
  const int d = model->state_dim();
  const int n_derived = static_cast<int>(model->observables().size()) - d;
  const int w = 8;
  const std::vector<double> x = random_batch(model->default_initial_state(), 5.0, w, 11);
  std::vector<double> f(x.size()), g(static_cast<std::size_t>(std::max(n_derived, 0)) * w);
  model->rhs(x.data(), f.data(), w);
  model->derived(x.data(), g.data(), w);
  for (int m = 0; m < w; ++m) {
    const std::vector<double> xm = column(x, d, w, m);
    std::vector<double> fm(d), gm(static_cast<std::size_t>(std::max(n_derived, 0)));
    model->rhs(xm.data(), fm.data(), 1);
    model->derived(xm.data(), gm.data(), 1);
    for (int i = 0; i < d; ++i) EXPECT_TRUE(same_bits(fm[i], f[i * w + m])) << "rhs " << i;
    for (int i = 0; i < n_derived; ++i) {
      EXPECT_TRUE(same_bits(gm[i], g[i * w + m])) << "derived " << i;
      EXPECT_TRUE(std::isfinite(g[i * w + m])) << "derived " << i;
    }
  }
  // member 3 moved to column 13 of a batch of 16 whose other members differ
  const int w2 = 16;
  std::vector<double> x2 = random_batch(model->default_initial_state(), 5.0, w2, 12);
  for (int i = 0; i < d; ++i) x2[i * w2 + 13] = x[i * w + 3];
  std::vector<double> f2(x2.size());
  model->rhs(x2.data(), f2.data(), w2);
  for (int i = 0; i < d; ++i) EXPECT_TRUE(same_bits(f2[i * w2 + 13], f[i * w + 3])) << i;
}

// Common practice: a step of half the stated stability limit must integrate the model from its
// default initial state onto the attractor without blowing up (50 time units).
TEST_P(ModelConformance, HalfTheMaxStableStepStaysBounded) {
  const auto model = make_model(GetParam());
  const double dt_max = model->max_stable_dt();
  ASSERT_GT(dt_max, 0.0);
  ASSERT_TRUE(std::isfinite(dt_max));
  const double dt = 0.5 * dt_max;
  std::vector<double> x = model->default_initial_state();
  integrators::Rk4Batch stepper(*model, 1);
  const auto steps = static_cast<long>(std::ceil(50.0 / dt));
  for (long k = 0; k < steps; ++k) stepper.step(x.data(), dt);
  for (double v : x) {
    EXPECT_TRUE(std::isfinite(v));
    EXPECT_LT(std::abs(v), 1e6);
  }
}

std::string parameter_name(const ::testing::TestParamInfo<std::string>& info) {
  std::string name = info.param;
  for (char& c : name) {
    if (!std::isalnum(static_cast<unsigned char>(c))) c = '_';
  }
  return name;
}

INSTANTIATE_TEST_SUITE_P(Registry, ModelConformance,
                         ::testing::ValuesIn(models::Registry::instance().names()), parameter_name);

// ---- helpers for the equation tests ---------------------------------------------------------

std::vector<double> rhs_of(const models::Model& model, const std::vector<double>& x) {
  std::vector<double> f(x.size());
  model.rhs(x.data(), f.data(), 1);
  return f;
}

/// Central-difference Jacobian J_ij = d f_i / d x_j. For a quadratic right-hand side the
/// central difference is exact in exact arithmetic for any h (the third derivatives vanish);
/// only rounding remains, about eps |f| / h.
Eigen::MatrixXd jacobian(const models::Model& model, const std::vector<double>& x, double h) {
  const int d = static_cast<int>(x.size());
  Eigen::MatrixXd j(d, d);
  for (int c = 0; c < d; ++c) {
    std::vector<double> xp = x, xm = x;
    xp[c] += h;
    xm[c] -= h;
    const std::vector<double> fp = rhs_of(model, xp), fm = rhs_of(model, xm);
    for (int r = 0; r < d; ++r) j(r, c) = (fp[r] - fm[r]) / (xp[c] - xm[c]);
  }
  return j;
}

// ---- lorenz63 -------------------------------------------------------------------------------

// Exact (Lorenz 1963, J. Atmos. Sci. 20, 130): the origin and C+- = (+-sqrt(beta(rho-1)),
// +-sqrt(beta(rho-1)), rho-1) are fixed points of the unforced equations. Only the rounding of
// the square root remains: |x y - beta z| <= a few ulps of beta (rho-1).
// Exact identity of the equations: a declared additive forcing p enters as rhs(x; p) = g(x) + p e,
// so raising p by h changes rhs by h e at every state, e the declared direction. The other
// parameters are moved off their defaults so that a direction that ignores them would fail.
TEST_P(ModelConformance, DeclaredForcingsEnterAdditively) {
  const models::ModelInfo& info = model_info(GetParam());
  EXPECT_FALSE(info.additive_forcings.empty()) << "every model declares its additive forcings";
  models::ParameterValues values = models::complete_parameters(info, {});
  for (const models::ParameterInfo& p : info.parameters) {
    if (p.structural || p.default_value.size() != 1) continue;
    const double moved = p.default_value[0] * 0.7 + 0.3;
    if (moved >= p.min && moved <= p.max) values[p.name] = {moved};
  }
  for (const models::AdditiveForcing& forcing : info.additive_forcings) {
    SCOPED_TRACE(forcing.parameter);
    ASSERT_EQ(values.count(forcing.parameter), 1u);
    const double h = 1.5;
    models::ParameterValues raised = values;
    raised[forcing.parameter][0] += h;
    const auto base = info.make(values);
    const auto up = info.make(raised);
    const std::vector<double> e = forcing.direction(values);
    ASSERT_EQ(e.size(), static_cast<std::size_t>(base->state_dim()));
    for (int trial = 0; trial < 3; ++trial) {
      std::vector<double> x(e.size());
      for (std::size_t i = 0; i < x.size(); ++i) x[i] = std::sin(1.7 * (i + 1) + trial) * 3.0;
      const std::vector<double> f0 = rhs_of(*base, x), f1 = rhs_of(*up, x);
      for (std::size_t i = 0; i < x.size(); ++i) {
        const double scale = std::abs(f0[i]) + std::abs(f1[i]) + 1.0;
        EXPECT_NEAR((f1[i] - f0[i]) / h, e[i], 8 * kEps * scale / h) << "component " << i;
      }
    }
  }
}

TEST(Lorenz63, FixedPointsAreStationary) {
  for (const auto& [sigma, rho, beta] : {std::tuple{10.0, 28.0, 8.0 / 3.0},
                                         std::tuple{16.0, 45.92, 4.0}}) {
    const auto model =
        make_model("lorenz63", {{"sigma", {sigma}}, {"rho", {rho}}, {"beta", {beta}}});
    const double c = std::sqrt(beta * (rho - 1.0));
    for (const std::vector<double>& p : {std::vector<double>{0.0, 0.0, 0.0},
                                         std::vector<double>{c, c, rho - 1.0},
                                         std::vector<double>{-c, -c, rho - 1.0}}) {
      const std::vector<double> f = rhs_of(*model, p);
      const double tol = 8.0 * kEps * beta * rho;
      for (double v : f) EXPECT_NEAR(v, 0.0, tol) << "at x = " << p[0] << ", z = " << p[2];
    }
  }
}

// Exact (from the Jacobian at the origin, Lorenz 1963): eigenvalues -beta and
// (-(sigma+1) +- sqrt((sigma+1)^2 + 4 sigma (rho-1))) / 2 = 11.8277235, -22.8277235 for the
// classical parameters. Tolerance: the quoted values carry 7 decimals (1e-7); against the
// closed form, rounding of the difference quotient (h = 1e-3, eps |f| / h ~ 1e-12).
TEST(Lorenz63, EigenvaluesAtTheOrigin) {
  const auto model = make_model("lorenz63");
  const Eigen::MatrixXd j = jacobian(*model, {0.0, 0.0, 0.0}, 1e-3);
  Eigen::EigenSolver<Eigen::MatrixXd> solver(j);
  std::vector<double> ev;
  for (int i = 0; i < 3; ++i) {
    EXPECT_EQ(solver.eigenvalues()[i].imag(), 0.0);
    ev.push_back(solver.eigenvalues()[i].real());
  }
  std::sort(ev.begin(), ev.end());
  const double sigma = 10.0, rho = 28.0, beta = 8.0 / 3.0;
  const double root = std::sqrt((sigma + 1) * (sigma + 1) + 4 * sigma * (rho - 1));
  EXPECT_NEAR(ev[0], -22.8277235, 1e-7);
  EXPECT_NEAR(ev[1], -8.0 / 3.0, 1e-7);
  EXPECT_NEAR(ev[2], 11.8277235, 1e-7);
  EXPECT_NEAR(ev[0], (-(sigma + 1) - root) / 2, 1e-10);
  EXPECT_NEAR(ev[1], -beta, 1e-10);
  EXPECT_NEAR(ev[2], (-(sigma + 1) + root) / 2, 1e-10);
}

// Exact: the divergence of the flow (trace of the Jacobian) is -(sigma + 1 + beta) at every
// state, forced or not (the forcing is constant). Tolerance: rounding of the difference
// quotients, eps |f| / h with |f| <~ 1e3 and h = 1e-3, summed over 3 entries: 1e-9.
TEST(Lorenz63, DivergenceIsConstant) {
  const double sigma = 10.0, beta = 8.0 / 3.0;
  const auto model =
      make_model("lorenz63", {{"forcing", {4.0}}, {"forcing_direction", {0.3, 1.0, -2.0}}});
  const std::vector<double> states = random_batch({0.0, 0.0, 25.0}, 20.0, 10, 5);
  for (int m = 0; m < 10; ++m) {
    const Eigen::MatrixXd j = jacobian(*model, column(states, 3, 10, m), 1e-3);
    EXPECT_NEAR(j.trace(), -(sigma + 1.0 + beta), 1e-9);
  }
}

// Exact (the README's equations): the forcing adds the constant tendency f*d, with d used as
// given (here |d| != 1). Each component is one extra addition: tolerance a few ulps of |f|.
TEST(Lorenz63, ForcingAddsTheGivenTendency) {
  const double f = 3.5;
  const std::vector<double> d = {1.0, 2.0, -0.5};
  const auto plain = make_model("lorenz63");
  const auto forced = make_model("lorenz63", {{"forcing", {f}}, {"forcing_direction", d}});
  const std::vector<double> states = random_batch({0.0, 0.0, 25.0}, 20.0, 6, 9);
  for (int m = 0; m < 6; ++m) {
    const std::vector<double> x = column(states, 3, 6, m);
    const std::vector<double> a = rhs_of(*plain, x), b = rhs_of(*forced, x);
    for (int i = 0; i < 3; ++i) {
      EXPECT_NEAR(b[i] - a[i], f * d[i], 8.0 * kEps * (std::abs(a[i]) + std::abs(f * d[i])));
    }
  }
}

// Exact (Lorenz 1963 equations, evaluated term by term here): x' = sigma(y-x), y' = x(rho-z)-y,
// z' = xy - beta z. Tolerance: a few ulps of the largest term.
TEST(Lorenz63, RhsMatchesTheEquations) {
  const double s = 12.0, r = 31.0, b = 2.5;
  const auto model = make_model("lorenz63", {{"sigma", {s}}, {"rho", {r}}, {"beta", {b}}});
  const std::vector<double> x = {3.25, -7.5, 22.0};
  const std::vector<double> f = rhs_of(*model, x);
  EXPECT_NEAR(f[0], s * (x[1] - x[0]), 4 * kEps * 200);
  EXPECT_NEAR(f[1], x[0] * (r - x[2]) - x[1], 4 * kEps * 200);
  EXPECT_NEAR(f[2], x[0] * x[1] - b * x[2], 4 * kEps * 200);
}

// ---- lorenz96 -------------------------------------------------------------------------------

// Exact (Lorenz 1996, "Predictability: a problem partly solved"): the advection term conserves
// energy, sum_k x_k (x_{k+1} - x_{k-2}) x_{k-1} = 0, so with F = 0 the rhs gives
// sum_k x_k dx_k/dt = -sum_k x_k^2 for every state. Checked for n = 4, 5, 40 (the cyclic
// indices differ). Tolerance: rounding, 16 eps times the sum of the magnitudes of all terms.
TEST(Lorenz96, AdvectionConservesEnergy) {
  for (int n : {4, 5, 40}) {
    const auto model = make_model("lorenz96", {{"n", {double(n)}}, {"F", {0.0}}});
    const std::vector<double> states = random_batch(std::vector<double>(n, 0.0), 10.0, 5, n);
    for (int m = 0; m < 5; ++m) {
      const std::vector<double> x = column(states, n, 5, m);
      const std::vector<double> f = rhs_of(*model, x);
      double lhs = 0.0, rhs = 0.0, scale = 0.0;
      for (int k = 0; k < n; ++k) {
        lhs += x[k] * f[k];
        rhs -= x[k] * x[k];
        const double a = std::abs(x[(k + 1) % n]) + std::abs(x[(k + n - 2) % n]);
        scale += std::abs(x[k]) * (a * std::abs(x[(k + n - 1) % n]) + std::abs(x[k]));
      }
      EXPECT_NEAR(lhs, rhs, 16.0 * kEps * scale) << "n = " << n;
    }
  }
}

// Exact: x_k = F for all k gives (F - F) F - F + F = 0 with no rounding at all.
TEST(Lorenz96, UniformSteadyStateIsAFixedPoint) {
  for (double F : {8.0, 2.5, -3.0}) {
    const auto model = make_model("lorenz96", {{"F", {F}}});
    const std::vector<double> f = rhs_of(*model, std::vector<double>(40, F));
    for (double v : f) EXPECT_EQ(v, 0.0);
  }
}

// Exact (Lorenz 1996 equation term by term, cyclic indices written out for n = 5).
TEST(Lorenz96, RhsMatchesTheEquationWithCyclicIndices) {
  const double F = 8.0;
  const auto model = make_model("lorenz96", {{"n", {5.0}}, {"F", {F}}});
  const std::vector<double> x = {1.5, -2.0, 3.25, 0.5, -4.0};
  const std::vector<double> f = rhs_of(*model, x);
  const int prev2[5] = {3, 4, 0, 1, 2}, prev1[5] = {4, 0, 1, 2, 3}, next[5] = {1, 2, 3, 4, 0};
  for (int k = 0; k < 5; ++k) {
    EXPECT_NEAR(f[k], (x[next[k]] - x[prev2[k]]) * x[prev1[k]] - x[k] + F, 4 * kEps * 64) << k;
  }
}

// Exact: the Jacobian's diagonal is -1 at every state, so its trace is -n (the sum of the
// Lyapunov exponents). Tolerance: difference-quotient rounding as for lorenz63, 1e-9.
TEST(Lorenz96, JacobianTraceIsMinusN) {
  const auto model = make_model("lorenz96", {{"n", {12.0}}});
  const std::vector<double> states = random_batch(std::vector<double>(12, 2.0), 8.0, 3, 3);
  for (int m = 0; m < 3; ++m) {
    EXPECT_NEAR(jacobian(*model, column(states, 12, 3, m), 1e-3).trace(), -12.0, 1e-9);
  }
}

// Exact (definitions in lorenz96.cpp): site_mean = sum x_k / n, energy = sum x_k^2 / 2. Tolerance:
// summation rounding, n eps times the sums of magnitudes.
TEST(Lorenz96, DerivedObservables) {
  const int n = 40;
  const auto model = make_model("lorenz96");
  const auto& obs = model->observables();
  ASSERT_EQ(obs.size(), static_cast<std::size_t>(n + 2));
  EXPECT_EQ(obs[0].name, "x0");
  EXPECT_EQ(obs[n - 1].name, "x39");
  EXPECT_EQ(obs[n].name, "site_mean");
  EXPECT_EQ(obs[n + 1].name, "energy");
  const std::vector<double> x = random_batch(std::vector<double>(n, 2.0), 6.0, 1, 21);
  double sum = 0.0, abs_sum = 0.0, sq = 0.0;
  for (double v : x) {
    sum += v;
    abs_sum += std::abs(v);
    sq += v * v;
  }
  std::vector<double> out(2);
  model->derived(x.data(), out.data(), 1);
  EXPECT_NEAR(out[0], sum / n, n * kEps * abs_sum / n);
  EXPECT_NEAR(out[1], sq / 2, n * kEps * sq);
}

}  // namespace
}  // namespace chaosweep::testing
