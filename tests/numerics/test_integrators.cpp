// Integrator tests: RK4 convergence order on a problem with a known solution, agreement with
// GSL's high-order adaptive integrator on Lorenz-63, batch == scalar reference, and the tangent
// RK4 step against finite differences of the RK4 map.
#include <gsl/gsl_errno.h>
#include <gsl/gsl_odeiv2.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <stdexcept>
#include <string>
#include <vector>

#include "integrators/lanes.hpp"
#include "integrators/reference.hpp"
#include "integrators/rk4.hpp"
#include "integrators/tangent_rk4.hpp"
#include "numerics_fixtures.hpp"

namespace chaosweep::testing {
namespace {

/// The harmonic oscillator x'' = -x as a first-order system: state (x, v), x' = v, v' = -x.
/// Exact solution from (cos phi, -sin phi): x = cos(t + phi), v = -sin(t + phi).
class Oscillator final : public models::Model {
 public:
  int state_dim() const override { return 2; }
  const std::vector<models::ObservableInfo>& observables() const override { return obs_; }
  void rhs(const double* x, double* dxdt, int width) const override {
    for (int m = 0; m < width; ++m) {
      dxdt[m] = x[width + m];
      dxdt[width + m] = -x[m];
    }
  }
  double max_stable_dt() const override { return 2.8; }
  std::vector<double> default_initial_state() const override { return {1.0, 0.0}; }

 private:
  std::vector<models::ObservableInfo> obs_ = {{"x", "position"}, {"v", "velocity"}};
};

/// Largest Euclidean error over `width` members started at phases phi_m = 0.3 m, after
/// integrating to T = 10 with step h, using the batch stepper.
double oscillator_error(double h) {
  const Oscillator model;
  const int w = 8;
  const double T = 10.0;
  std::vector<double> x(2 * w);
  for (int m = 0; m < w; ++m) {
    x[m] = std::cos(0.3 * m);
    x[w + m] = -std::sin(0.3 * m);
  }
  integrators::Rk4Batch stepper(model, w);
  const long steps = std::lround(T / h);
  for (long k = 0; k < steps; ++k) stepper.step(x.data(), h);
  double worst = 0.0;
  for (int m = 0; m < w; ++m) {
    const double ex = x[m] - std::cos(T + 0.3 * m), ev = x[w + m] + std::sin(T + 0.3 * m);
    worst = std::max(worst, std::hypot(ex, ev));
  }
  return worst;
}

// Published (Hairer, Norsett & Wanner 1993, Solving ODEs I, Springer): classical RK4 has order
// 4. On x'' = -x (exact solution cos t), T = 10, h = 0.2 .. 0.0125, the observed order
// log2(e(h) / e(h/2)) lies in [3.95, 4.05] (bounds from REFERENCES.md). At h = 0.0125 the error
// is ~2e-9, far above rounding (~1e-13), so the order is not polluted.
TEST(Rk4, ObservedOrderOnTheHarmonicOscillator) {
  double previous = oscillator_error(0.2);
  for (double h : {0.1, 0.05, 0.025, 0.0125}) {
    const double e = oscillator_error(h);
    const double order = std::log2(previous / e);
    EXPECT_GE(order, 3.95) << "h = " << h;
    EXPECT_LE(order, 4.05) << "h = " << h;
    previous = e;
  }
}

// Exact (from RK4's stability function R(z) = 1 + z + z^2/2 + z^3/6 + z^4/24 at z = i h):
// arg R(ih) = h - h^5/120 + O(h^7) and |R(ih)| = 1 - h^6/72 + ..., so after T/h steps the
// error is the phase lag T h^4 / 120 to leading order. Tolerance: the next term is relatively
// O(h^2), below 1% for h <= 0.05.
TEST(Rk4, GlobalErrorMatchesTheLeadingPhaseLag) {
  for (double h : {0.05, 0.025, 0.0125}) {
    const double predicted = 10.0 * std::pow(h, 4) / 120.0;
    EXPECT_NEAR(oscillator_error(h) / predicted, 1.0, 0.01) << "h = " << h;
  }
}

// ---- Lorenz-63 against GSL ------------------------------------------------------------------

struct L63Parameters {
  double sigma, rho, beta, f, d[3];
};

/// Lorenz (1963) with forcing f*d, written here from the README's equations, for GSL.
int l63_gsl(double, const double y[], double dydt[], void* params) {
  const auto* p = static_cast<const L63Parameters*>(params);
  dydt[0] = p->sigma * (y[1] - y[0]) + p->f * p->d[0];
  dydt[1] = y[0] * (p->rho - y[2]) - y[1] + p->f * p->d[1];
  dydt[2] = y[0] * y[1] - p->beta * y[2] + p->f * p->d[2];
  return GSL_SUCCESS;
}

/// GSL's Runge-Kutta-Prince-Dormand (8, 9) driver to t1 at absolute and relative tolerance 1e-13.
std::vector<double> l63_by_gsl(L63Parameters p, std::vector<double> y, double t1) {
  gsl_odeiv2_system sys = {l63_gsl, nullptr, 3, &p};
  gsl_odeiv2_driver* driver =
      gsl_odeiv2_driver_alloc_y_new(&sys, gsl_odeiv2_step_rk8pd, 1e-4, 1e-13, 1e-13);
  double t = 0.0;
  const int status = gsl_odeiv2_driver_apply(driver, &t, t1, y.data());
  gsl_odeiv2_driver_free(driver);
  EXPECT_EQ(status, GSL_SUCCESS);
  return y;
}

std::vector<double> l63_by_rk4(const models::Model& model, std::vector<double> y, double t1,
                               double dt) {
  integrators::Rk4Batch stepper(model, 1);
  const long steps = std::lround(t1 / dt);
  for (long k = 0; k < steps; ++k) stepper.step(y.data(), dt);
  return y;
}

double distance(const std::vector<double>& a, const std::vector<double>& b) {
  double s = 0.0;
  for (std::size_t i = 0; i < a.size(); ++i) s += (a[i] - b[i]) * (a[i] - b[i]);
  return std::sqrt(s);
}

// General-purpose reference library (GSL 2.7, gsl_odeiv2 rk8pd at tolerance 1e-13) on
// Lorenz-63, t = 0..2 from (1, 1, 20), RK4 at dt = 0.001. Bound: RK4's global error is
// estimated from the run itself by Richardson extrapolation, E(h) ~ 16/15 |x_h - x_{h/2}|
// (order 4), which is exact to leading order with a relative correction O(h) (here ~1e-2);
// we require |x_h - x_gsl| <= 1.25 E(h) + 1e-9 (1e-9 covers GSL's own accumulated error at
// tolerance 1e-13 over the growth e^(0.9 * 2) of this interval; E(h) is ~5e-8 here), and that
// the extrapolated value (16 x_{h/2} - x_h) / 15 is at least 10 times closer to GSL than x_h.
TEST(Rk4, Lorenz63AgreesWithGslWithinRk4GlobalError) {
  const double t1 = 2.0, dt = 0.001;
  const std::vector<double> start = {1.0, 1.0, 20.0};
  const std::vector<L63Parameters> cases = {{10.0, 28.0, 8.0 / 3.0, 0.0, {1.0, 0.0, 0.0}},
                                            {10.0, 28.0, 8.0 / 3.0, 3.0, {0.8, 0.6, 0.5}}};
  for (const L63Parameters& p : cases) {
    const auto model = make_model(
        "lorenz63", {{"forcing", {p.f}}, {"forcing_direction", {p.d[0], p.d[1], p.d[2]}}});
    const std::vector<double> ref = l63_by_gsl(p, start, t1);
    const std::vector<double> coarse = l63_by_rk4(*model, start, t1, dt);
    const std::vector<double> fine = l63_by_rk4(*model, start, t1, dt / 2);
    const double estimate = 16.0 / 15.0 * distance(coarse, fine);
    std::vector<double> extrapolated(3);
    for (int i = 0; i < 3; ++i) extrapolated[i] = (16.0 * fine[i] - coarse[i]) / 15.0;
    EXPECT_LE(distance(coarse, ref), 1.25 * estimate + 1e-9) << "forcing " << p.f;
    EXPECT_LE(distance(extrapolated, ref), 0.1 * distance(coarse, ref)) << "forcing " << p.f;
  }
}

// ---- batch integrator == scalar reference ---------------------------------------------------

// Bitwise, by design: Rk4Batch::step and rk4_scalar_reference perform the same IEEE-754
// operations in the same order for every member, and the right-hand sides compute each column
// independently (no reassociation: the build has no -ffast-math). Any difference would mean a
// member's result depends on its column or on the batch width. Every model of the registry, at
// several widths: a model with its own fused step (Model::fused_rk4_step, taken by
// Rk4Batch::step at widths it supports) must give the same bits as the reference too.
TEST(Rk4, BatchEqualsScalarReferenceBitwise) {
  int fused = 0;
  for (const std::string& name : models::Registry::instance().names()) {
    const auto model = make_model(name);
    for (const int w : {8, 24, 64}) {
      // (the two-scale ring's fast sites are of order 0.1: a spread of 3 would blow them up,
      // and non-finite states would compare equal whatever the arithmetic)
      const int d = model->state_dim(), steps = d > 100 ? 200 : 1000;
      const double dt = std::min(0.01, 0.5 * model->max_stable_dt());
      std::vector<double> x = random_batch(model->default_initial_state(), d > 100 ? 0.1 : 3.0,
                                           w, 77);
      const std::vector<double> x0 = x;
      integrators::Rk4Batch stepper(*model, w);
      if (model->fused_rk4_scratch(w) > 0) ++fused;
      for (int k = 0; k < steps; ++k) stepper.step(x.data(), dt);
      ASSERT_TRUE(std::all_of(x.begin(), x.end(), [](double v) { return std::isfinite(v); }))
          << name << " width " << w;
      for (int m = 0; m < w; ++m) {
        std::vector<double> xm = column(x0, d, w, m);
        integrators::rk4_scalar_reference(*model, xm.data(), dt, steps);
        for (int i = 0; i < d; ++i) {
          ASSERT_TRUE(same_bits(xm[i], x[static_cast<std::size_t>(i) * w + m]))
              << name << " width " << w << " member " << m << " component " << i;
        }
      }
    }
  }
  EXPECT_GT(fused, 0) << "no model's fused step was compared";
}

// Bitwise, by design: a scheduled step (step_at) by a model's fused kernel reads each stage's
// parameters after the clock set them, so every member gets what the generic stages give it.
// Members are independent columns, so the first members of a batch one wider than a multiple
// of the SIMD register (which the fused kernels refuse) are the generic path's reference. Every
// non-structural scalar parameter of every model with a fused step is scheduled in turn
// (1 percent around its value), and the clock must be told the same times on both paths.
TEST(Rk4, ScheduledFusedStepEqualsGenericBitwise) {
  struct Clock final : integrators::Rk4Batch::StageClock {
    models::Model& model;
    int slot;
    double base;
    std::vector<double> times;
    Clock(models::Model& m, int s, double b) : model(m), slot(s), base(b) {}
    void set_time(double t) override {
      times.push_back(t);
      model.set_parameter(slot, base * (1.0 + 0.01 * std::sin(3.0 * t)));
    }
  };
  int compared = 0;
  for (const std::string& name : models::Registry::instance().names()) {
    const models::ModelInfo& info = *models::Registry::instance().find(name);
    const int w = 2 * integrators::kLanes;
    if (make_model(name)->fused_rk4_scratch(w) == 0) continue;
    for (const models::ParameterInfo& p : info.parameters) {
      if (p.structural || p.default_value.size() != 1 || p.default_value[0] == 0.0) continue;
      const auto fused_model = make_model(name), generic_model = make_model(name);
      const int slot = fused_model->parameter_slot(p.name);
      if (slot < 0) continue;
      const int d = fused_model->state_dim(), steps = d > 100 ? 100 : 500;
      const double dt = std::min(0.01, 0.5 * fused_model->max_stable_dt());
      const std::vector<double> x0 =
          random_batch(fused_model->default_initial_state(), d > 100 ? 0.1 : 3.0, w + 1, 31);
      std::vector<double> fused(static_cast<std::size_t>(d) * w), generic = x0;
      for (int i = 0; i < d; ++i) {
        for (int m = 0; m < w; ++m) fused[i * w + m] = x0[i * (w + 1) + m];
      }
      Clock fused_clock(*fused_model, slot, p.default_value[0]);
      Clock generic_clock(*generic_model, slot, p.default_value[0]);
      integrators::Rk4Batch a(*fused_model, w), b(*generic_model, w + 1);
      for (int k = 0; k < steps; ++k) {
        a.step_at(fused.data(), dt, k * dt, (k + 1) * dt, fused_clock);
        b.step_at(generic.data(), dt, k * dt, (k + 1) * dt, generic_clock);
      }
      ASSERT_TRUE(std::all_of(fused.begin(), fused.end(), [](double v) { return std::isfinite(v); }))
          << name << " " << p.name;
      for (int i = 0; i < d; ++i) {
        for (int m = 0; m < w; ++m) {
          ASSERT_TRUE(same_bits(fused[i * w + m], generic[i * (w + 1) + m]))
              << name << " scheduled " << p.name << " member " << m << " component " << i;
        }
      }
      ASSERT_EQ(fused_clock.times, generic_clock.times) << name << " " << p.name;
      ++compared;
    }
  }
  EXPECT_GT(compared, 0) << "no model's scheduled fused step was compared";
}

// The reference integrator is itself fourth order (same oscillator, published order 4).
TEST(Rk4, ScalarReferenceObservedOrder) {
  const Oscillator model;
  auto error = [&](double h) {
    std::vector<double> x = {1.0, 0.0};
    integrators::rk4_scalar_reference(model, x.data(), h, std::lround(10.0 / h));
    return std::hypot(x[0] - std::cos(10.0), x[1] + std::sin(10.0));
  };
  const double order = std::log2(error(0.05) / error(0.025));
  EXPECT_GE(order, 3.95);
  EXPECT_LE(order, 4.05);
}

// ---- tangent RK4 == derivative of the RK4 map -----------------------------------------------

/// Largest |(Phi(x + eps v) - Phi(x - eps v)) / 2 eps - tangent| over the batch's members and
/// components for one tangent vector: Phi is Rk4Batch's step of x0 ([3][w]), v the direction
/// and tangent the tangent stepper's image of v (both [3][w]).
double central_difference_error(const models::Model& model, const std::vector<double>& x0,
                                const std::vector<double>& v, const std::vector<double>& tangent,
                                int w, double dt, double eps) {
  std::vector<double> plus = x0, minus = x0;
  for (std::size_t i = 0; i < x0.size(); ++i) {
    plus[i] += eps * v[i];
    minus[i] -= eps * v[i];
  }
  integrators::Rk4Batch stepper(model, w);
  stepper.step(plus.data(), dt);
  stepper.step(minus.data(), dt);
  double worst = 0.0;
  for (std::size_t i = 0; i < x0.size(); ++i) {
    worst = std::max(worst, std::abs((plus[i] - minus[i]) / (2.0 * eps) - tangent[i]));
  }
  return worst;
}

// Exact identity (chain rule): the tangent step is the derivative D Phi(x) v of the RK4 map Phi
// itself, not an approximation of the flow's. Taylor's theorem for the central difference gives
// (Phi(x + eps v) - Phi(x - eps v)) / 2 eps = D Phi(x) v + eps^2 / 6 D^3 Phi(x)[v, v, v]
// + O(eps^4), so the difference from the tangent must shrink as eps^2: a factor 4 per halving
// of eps. Lorenz-63 (sigma 10, rho 28, beta 8/3), dt 0.01, 8 members near the attractor, three
// unit directions each: at eps = 0.04 .. 0.01 the eps^2 term is 1e-8 .. 1e-9 and rounding
// (~1e-16 |x| / eps ~ 1e-13) is far below it, so the ratios lie in [3.8, 4.2] (tolerance:
// common practice for observed orders). A tangent that is not the map's derivative (e.g. J(x)
// at the start of the step for every stage) leaves an eps-independent O(dt^2) difference, so
// the ratio falls towards 1 and the error at eps = 0.01 exceeds 1e-6.
TEST(TangentRk4, IsTheDerivativeOfTheRk4StepByCentralDifferences) {
  const auto model = make_model("lorenz63");
  const int w = 8, vectors = 3;
  const double dt = 0.01;
  const std::vector<double> x0 = random_batch({0.0, 0.0, 25.0}, 8.0, w, 2024);
  std::vector<double> tangents(static_cast<std::size_t>(vectors) * 3 * w);
  std::mt19937_64 gen(99);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (double& value : tangents) value = normal(gen);
  for (int j = 0; j < vectors; ++j) {  // unit length per member
    for (int m = 0; m < w; ++m) {
      double norm = 0.0;
      for (int i = 0; i < 3; ++i) norm += std::pow(tangents[(j * 3 + i) * w + m], 2);
      for (int i = 0; i < 3; ++i) tangents[(j * 3 + i) * w + m] /= std::sqrt(norm);
    }
  }
  const std::vector<double> directions = tangents;
  std::vector<double> x = x0;
  integrators::TangentRk4Batch stepper(*model, w, vectors);
  stepper.step(x.data(), tangents.data(), dt);
  for (int j = 0; j < vectors; ++j) {
    const auto vector_of = [&](const std::vector<double>& all) {
      return std::vector<double>(all.begin() + j * 3 * w, all.begin() + (j + 1) * 3 * w);
    };
    const std::vector<double> v = vector_of(directions), image = vector_of(tangents);
    double previous = central_difference_error(*model, x0, v, image, w, dt, 0.04);
    for (double eps : {0.02, 0.01}) {
      const double e = central_difference_error(*model, x0, v, image, w, dt, eps);
      EXPECT_GE(previous / e, 3.8) << "vector " << j << " eps " << eps;
      EXPECT_LE(previous / e, 4.2) << "vector " << j << " eps " << eps;
      previous = e;
    }
    EXPECT_LT(previous, 1e-6) << "vector " << j;
  }
}

// Bitwise, by design: a model's fused tangent step (Model::fused_tangent_rk4_step) does the
// generic stepper's operations per member. Members are independent columns, so the first
// members of a batch one wider than a multiple of the SIMD register (which the fused step
// refuses) are the generic stages' reference; state and every vector, after every step.
TEST(TangentRk4, FusedStepEqualsGenericBitwise) {
  int compared = 0;
  for (const std::string& name : models::Registry::instance().names()) {
    const auto model = make_model(name);
    if (!model->has_tangent()) continue;
    const int d = model->state_dim(), w = 2 * integrators::kLanes, vectors = std::min(d, 3);
    std::vector<double> probe_x(static_cast<std::size_t>(d) * w, 0.0);
    std::vector<double> probe_v(static_cast<std::size_t>(vectors) * d * w, 0.0);
    std::vector<double> probe_scratch(model->fused_tangent_rk4_scratch(w));
    if (!model->fused_tangent_rk4_step(probe_x.data(), probe_v.data(), vectors, 0.0, w,
                                       probe_scratch.data())) {
      continue;
    }
    const double dt = std::min(0.01, 0.5 * model->max_stable_dt());
    const std::vector<double> x0 =
        random_batch(model->default_initial_state(), d > 100 ? 0.1 : 3.0, w + 1, 41);
    std::vector<double> fused(static_cast<std::size_t>(d) * w), generic = x0;
    std::vector<double> fused_v(static_cast<std::size_t>(vectors) * d * w);
    std::vector<double> generic_v(static_cast<std::size_t>(vectors) * d * (w + 1));
    std::mt19937_64 rng(43);
    std::normal_distribution<double> normal;
    for (int j = 0; j < vectors; ++j) {
      for (int i = 0; i < d; ++i) {
        for (int m = 0; m <= w; ++m) {
          const double v = normal(rng);
          generic_v[(static_cast<std::size_t>(j) * d + i) * (w + 1) + m] = v;
          if (m < w) fused_v[(static_cast<std::size_t>(j) * d + i) * w + m] = v;
        }
      }
    }
    for (int i = 0; i < d; ++i) {
      for (int m = 0; m < w; ++m) fused[i * w + m] = x0[i * (w + 1) + m];
    }
    integrators::TangentRk4Batch a(*model, w, vectors), b(*model, w + 1, vectors);
    for (int k = 0; k < 300; ++k) {
      a.step(fused.data(), fused_v.data(), dt);
      b.step(generic.data(), generic_v.data(), dt);
      for (int i = 0; i < d; ++i) {
        for (int m = 0; m < w; ++m) {
          ASSERT_TRUE(same_bits(fused[i * w + m], generic[i * (w + 1) + m]))
              << name << " step " << k << " member " << m << " component " << i;
        }
      }
      for (int j = 0; j < vectors; ++j) {
        for (int i = 0; i < d; ++i) {
          for (int m = 0; m < w; ++m) {
            ASSERT_TRUE(same_bits(fused_v[(static_cast<std::size_t>(j) * d + i) * w + m],
                                  generic_v[(static_cast<std::size_t>(j) * d + i) * (w + 1) + m]))
                << name << " step " << k << " vector " << j << " member " << m << " component " << i;
          }
        }
      }
    }
    ++compared;
  }
  EXPECT_GT(compared, 0) << "no model's fused tangent step was compared";
}

// Bitwise, by design: the tangent stepper moves the state with Rk4Batch::step's operations in
// the same order, so Lyapunov exponents are those of the members' own trajectories; with a
// stage clock (step_at) the state is that of Rk4Batch::step_at under the same clock.
TEST(TangentRk4, StateFollowsRk4BatchBitwise) {
  struct Clock final : integrators::Rk4Batch::StageClock {
    std::vector<double> times;
    void set_time(double t) override { times.push_back(t); }
  };
  const auto model = make_model("lorenz96");
  const int d = model->state_dim(), w = 8, vectors = 2;
  const double dt = 0.01;
  const std::vector<double> x0 = random_batch(model->default_initial_state(), 3.0, w, 5);
  std::vector<double> x = x0, y = x0, tangents(static_cast<std::size_t>(vectors) * d * w, 0.5);
  integrators::Rk4Batch plain(*model, w);
  integrators::TangentRk4Batch tangent(*model, w, vectors);
  Clock plain_clock, tangent_clock;
  for (int k = 0; k < 200; ++k) {
    plain.step_at(x.data(), dt, k * dt, (k + 1) * dt, plain_clock);
    tangent.step_at(y.data(), tangents.data(), dt, k * dt, (k + 1) * dt, tangent_clock);
  }
  for (std::size_t i = 0; i < x.size(); ++i) EXPECT_TRUE(same_bits(x[i], y[i])) << i;
  // Each stage's time before the state's stage and again before each vector's.
  ASSERT_EQ(tangent_clock.times.size(), plain_clock.times.size() * (1 + vectors));
  for (std::size_t s = 0; s < 3; ++s) {
    for (int j = 0; j <= vectors; ++j) {
      EXPECT_TRUE(same_bits(tangent_clock.times[j * 3 + s], plain_clock.times[s])) << s << " " << j;
    }
  }
  EXPECT_THROW(integrators::TangentRk4Batch(Oscillator(), w, 1), std::invalid_argument);
}

}  // namespace
}  // namespace chaosweep::testing
