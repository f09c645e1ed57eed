// The integration kernels (run/kernels.hpp): the fused Lorenz-63 kernel and the ring kernel
// of Lorenz-96 give bitwise what the generic path (Rk4Batch over the model's rhs, per-step
// accumulators) gives, at every batch width and column, the extremes and their times included;
// spin-up leaves the accumulators alone.
#include <gtest/gtest.h>

#include <cstdint>
#include <string>
#include <type_traits>
#include <vector>

#include "integrators/reference.hpp"
#include "numerics_fixtures.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/batch_work.hpp"
#include "run/kernels.hpp"
#include "spec/spec.hpp"

namespace chaosweep::testing {
namespace {

/// Forced Lorenz-63 with sign regimes on y, a histogram of z, observables (z, x) (a subset in
/// another order), trajectories; spin-up 1.23 and duration 4.56 time units at dt 0.005.
spec::Spec l63_spec() {
  spec::Spec s = small_lorenz63_spec("kernel-test");
  s.parameters = models::complete_parameters(
      model_info("lorenz63"), {{"forcing", {3.0}}, {"forcing_direction", {0.0, 1.0, 0.2}}});
  s.ensemble.members = 40;
  s.ensemble.initial.spinup = 5.0;
  s.ensemble.perturbation = {spec::Distribution::gaussian, 1e-2};
  s.ensemble.seed = 314;
  s.integration.spinup = 1.23;
  s.integration.duration = 4.56;
  s.statistics.observables = {"z", "x"};
  s.statistics.regimes.observable = "y";
  s.statistics.regimes.labels = {"up", "down"};
  s.statistics.histogram = {true, "z", 30, 5.0, 45.0};
  s.output.trajectories = {40, 0.1};
  s.run = spec::Run{};  // the default batch size
  return s;
}

/// Lorenz-63 started far off the attractor at a large step: some members overflow.
spec::Spec blow_up_spec() {
  spec::Spec s = blown_up(l63_spec());
  return s;
}

/// Lorenz-96 (n 40) with its derived observables, sign regimes on x3 and a histogram of x0.
spec::Spec l96_spec() {
  spec::Spec s = l63_spec();
  s.model = "lorenz96";
  s.parameters = models::complete_parameters(model_info("lorenz96"), {});
  s.ensemble.perturbation = {spec::Distribution::gaussian, 1e-1};
  s.integration.dt = 0.01;
  s.statistics.observables = {};
  s.statistics.regimes.observable = "x3";
  s.statistics.histogram = {true, "x0", 25, -10.0, 15.0};
  return s;
}

/// The three-variable circulation model (defaults: its chaotic case) with sign regimes on y,
/// a histogram of x and every state variable, dt 0.01.
spec::Spec l84_spec() {
  spec::Spec s = l63_spec();
  s.model = "lorenz84";
  s.parameters = models::complete_parameters(model_info("lorenz84"), {});
  s.ensemble.perturbation = {spec::Distribution::gaussian, 1e-2};
  s.integration.dt = 0.01;
  s.statistics.observables = {"x", "y", "z"};
  s.statistics.regimes.observable = "y";
  s.statistics.histogram = {true, "x", 30, -1.0, 3.0};
  return s;
}

struct Campaign {
  plan::Plan plan;
  run::KernelKind kernel;
  std::vector<run::BatchResult> batches;
};

/// Every batch of case 0 at batch width `width`, and the kernel the runner chose.
Campaign run_at_width(spec::Spec s, int width) {
  s.run.batch_size = width;
  Campaign r{plan::make_plan(s), run::KernelKind::generic, {}};
  const run::CaseRunner runner(s, r.plan, r.plan.cases[0]);
  for (std::int64_t index = 0; index < r.plan.batch_count(); ++index) {
    r.batches.push_back(runner.run(r.plan.batch(index)));
  }
  const auto model = make_model(s.model, s.parameters);
  run::Setup setup;
  setup.model = s.model;
  setup.model_info = r.plan.model;
  setup.width = width;
  setup.state_dim = model->state_dim();
  setup.observables = r.plan.observable_index;
  setup.regime_kind = s.statistics.regimes.kind;
  setup.n_regimes = 2;
  for (std::size_t i = 0; i < model->observables().size(); ++i) {
    const std::string& name = model->observables()[i].name;
    if (name == s.statistics.regimes.observable) setup.regime_coordinates = {static_cast<int>(i)};
    if (name == s.statistics.histogram.observable) setup.histogram_observable = static_cast<int>(i);
  }
  setup.histogram = s.statistics.histogram;
  if (s.schedule.kind != spec::ScheduleKind::none) setup.schedule = s.schedule;
  setup.method = s.integration.method;
  setup.noise = s.noise;
  r.kernel = run::choose_kernel(setup);
  return r;
}

template <typename T>
std::vector<T> slice(const std::vector<T>& a, std::size_t first, std::size_t count) {
  return std::vector<T>(a.begin() + first * count, a.begin() + (first + 1) * count);
}

/// Member m's numbers from the batches of a run (batch m / width, column m % width).
struct Member {
  std::vector<double> initial, mean, variance, fraction, residence, trajectory;
  std::uint8_t status;
  std::int64_t transitions;
  std::vector<double> stderr_, tau;
  std::vector<double> min, max, min_time, max_time;
  std::vector<double> spread, horizon;  // twins (empty without)
};
Member member(const Campaign& r, int m) {
  const run::BatchResult& b = r.batches[m / r.plan.batch_size];
  const std::size_t j = m % r.plan.batch_size, d = r.plan.state_dim;
  const std::size_t o = r.plan.observables.size(), g = r.plan.regime_labels.size();
  return {slice(b.initial_state, j, d), slice(b.time_mean, j, o), slice(b.time_variance, j, o),
          slice(b.regime_fraction, j, g), slice(b.regime_mean_residence, j, g),
          slice(b.trajectory, j, static_cast<std::size_t>(r.plan.trajectory_samples) * d),
          b.status[j], b.regime_transitions[j], slice(b.time_mean_stderr, j, o),
          slice(b.time_mean_tau, j, o), slice(b.extreme_min, j, o), slice(b.extreme_max, j, o),
          slice(b.extreme_min_time, j, o), slice(b.extreme_max_time, j, o),
          b.spread.empty() ? std::vector<double>{}
                           : slice(b.spread, j, b.spread.size() / b.count),
          b.horizon.empty() ? std::vector<double>{}
                            : slice(b.horizon, j, b.horizon.size() / b.count)};
}

/// The histogram summed over every batch.
std::vector<std::int64_t> histogram(const Campaign& r) {
  std::vector<std::int64_t> total(r.batches.front().histogram.size(), 0);
  for (const run::BatchResult& b : r.batches) {
    for (std::size_t i = 0; i < total.size(); ++i) total[i] += b.histogram[i];
  }
  return total;
}

void expect_same_members(const Campaign& a, const Campaign& b, int members) {
  for (int m = 0; m < members; ++m) {
    SCOPED_TRACE("member " + std::to_string(m));
    const Member x = member(a, m), y = member(b, m);
    EXPECT_TRUE(bitwise_equal(x.initial, y.initial));
    EXPECT_EQ(x.status, y.status);
    EXPECT_TRUE(bitwise_equal(x.mean, y.mean));
    EXPECT_TRUE(bitwise_equal(x.variance, y.variance));
    EXPECT_TRUE(bitwise_equal(x.stderr_, y.stderr_));
    EXPECT_TRUE(bitwise_equal(x.tau, y.tau));
    EXPECT_TRUE(bitwise_equal(x.fraction, y.fraction));
    EXPECT_TRUE(bitwise_equal(x.residence, y.residence));
    EXPECT_EQ(x.transitions, y.transitions);
    EXPECT_TRUE(bitwise_equal(x.trajectory, y.trajectory));
    EXPECT_TRUE(bitwise_equal(x.min, y.min));
    EXPECT_TRUE(bitwise_equal(x.max, y.max));
    EXPECT_TRUE(bitwise_equal(x.min_time, y.min_time));
    EXPECT_TRUE(bitwise_equal(x.max_time, y.max_time));
    EXPECT_TRUE(bitwise_equal(x.spread, y.spread));
    EXPECT_TRUE(bitwise_equal(x.horizon, y.horizon));
  }
  EXPECT_EQ(histogram(a), histogram(b));
}

// Exact by design (kernels.hpp): the fused kernel performs the generic path's operations per
// member, so at widths 8, 24, 40 and 56 (between them every group of interleaved Lanes a width
// that is a multiple of 8 uses, at any SIMD level) every member's numbers, the trajectories and
// the summed histogram are bitwise those of width 21 (odd: the generic path). Widths 24 and 56
// end in a padded batch.
TEST(Kernels, FusedLorenz63EqualsGenericBitwise) {
  for (const spec::Spec& s : {l63_spec(), blow_up_spec()}) {
    const Campaign generic = run_at_width(s, 21);
    ASSERT_EQ(generic.kernel, run::KernelKind::generic);
    for (int width : {8, 24, 40, 56}) {
      SCOPED_TRACE("width " + std::to_string(width));
      const Campaign fused = run_at_width(s, width);
      ASSERT_EQ(fused.kernel, run::KernelKind::fused);
      expect_same_members(fused, generic, 40);
    }
  }
}

// Exact by design (lorenz84_equations.hpp): the fused kernel runs the model's own equations on
// Lanes, as for Lorenz-63; width 21 (odd) takes the generic path.
TEST(Kernels, FusedLorenz84EqualsGenericBitwise) {
  const Campaign generic = run_at_width(l84_spec(), 21);
  ASSERT_EQ(generic.kernel, run::KernelKind::generic);
  for (int width : {8, 24, 40}) {
    SCOPED_TRACE("width " + std::to_string(width));
    const Campaign fused = run_at_width(l84_spec(), width);
    ASSERT_EQ(fused.kernel, run::KernelKind::fused);
    expect_same_members(fused, generic, 40);
  }
}

/// l63_spec under stochastic forcing: `method` with `kind` noise (amplitude 2, multiplicative
/// 0.2; red with correlation time 0.05) on `variables`, per member or shared.
spec::Spec noisy(spec::Spec s, const std::string& method, spec::NoiseKind kind,
                 std::vector<int> variables, bool shared) {
  s.integration.method = method;
  s.noise.kind = kind;
  s.noise.amplitude = kind == spec::NoiseKind::multiplicative ? 0.2 : 2.0;
  if (kind == spec::NoiseKind::red) s.noise.correlation_time = 0.05;
  const char* names[] = {"x", "y", "z"};
  for (int v : variables) s.noise.variable_names.push_back(v < 3 ? names[v] : "");
  s.noise.variables = std::move(variables);
  s.noise.shared = shared;
  if (s.model == "lorenz96") {  // sites x0 .. x39
    s.noise.variable_names.clear();
    for (int v : s.noise.variables) s.noise.variable_names.push_back("x" + std::to_string(v));
  }
  return s;
}

/// The noisy campaigns the fused kernel is checked on.
std::vector<spec::Spec> noisy_specs() {
  using K = spec::NoiseKind;
  std::vector<spec::Spec> specs = {
      noisy(l63_spec(), "heun", K::additive, {0, 1, 2}, false),
      noisy(l63_spec(), "heun", K::additive, {2}, true),
      noisy(l63_spec(), "euler-maruyama", K::additive, {0, 2}, false),
      noisy(l63_spec(), "heun", K::multiplicative, {1, 2}, false),
      noisy(l63_spec(), "euler-maruyama", K::multiplicative, {0, 1, 2}, true),
      noisy(l63_spec(), "heun", K::red, {0, 1, 2}, false),
      noisy(l63_spec(), "euler-maruyama", K::red, {1}, true),
      noisy(l63_spec(), "heun", K::none, {}, false),
      noisy(blow_up_spec(), "euler-maruyama", K::additive, {0, 1, 2}, false),
  };
  // twins (each twin draws its member's noise), and a scheduled noise amplitude
  spec::Spec twins = noisy(l63_spec(), "heun", K::additive, {0, 1, 2}, false);
  twins.statistics.twins = {true, 1e-6, 0.25, 0.5};
  specs.push_back(twins);
  spec::Spec scheduled = noisy(l63_spec(), "heun", K::red, {0, 2}, false);
  scheduled.schedule.kind = spec::ScheduleKind::ramp;
  scheduled.schedule.parameter = spec::kNoiseAmplitudeAxis;
  scheduled.schedule.from = 0.5;
  scheduled.schedule.to = 4.0;
  scheduled.schedule.start = 1.0;
  scheduled.schedule.end = 5.0;
  specs.push_back(scheduled);
  return specs;
}

// Exact by design (fused_kernel.cpp, SdeStep): under stochastic forcing the fused kernel
// performs SdeBatch::step's operations per member on ForcingNoise's increments, so Euler-Maruyama
// and Heun with additive, multiplicative and red noise, per member or shared, on some or all
// variables, without noise, with blown-up members, with twins and with a scheduled noise
// amplitude give every member's numbers bitwise as the generic path does (width 21, odd) at
// widths 8, 24 and 40 (every group of interleaved Lanes; 24 ends in a padded batch).
TEST(Kernels, NoisyFusedLorenz63EqualsGenericBitwise) {
  for (const spec::Spec& s : noisy_specs()) {
    SCOPED_TRACE(s.integration.method + " " + spec::noise_kind_name(s.noise.kind) +
                 (s.noise.shared ? " shared" : "") + (s.statistics.twins.enabled ? " twins" : "") +
                 (s.schedule.kind != spec::ScheduleKind::none ? " scheduled" : ""));
    const Campaign generic = run_at_width(s, 21);
    ASSERT_EQ(generic.kernel, run::KernelKind::generic);
    for (int width : {8, 24, 40}) {
      SCOPED_TRACE("width " + std::to_string(width));
      const Campaign fused = run_at_width(s, width);
      ASSERT_EQ(fused.kernel, run::KernelKind::fused);
      expect_same_members(fused, generic, 40);
    }
  }
}

// A schedule on a model parameter keeps noisy Lorenz-63 and the noisy ring on the generic path
// (its value is set at the scheme's stage times there).
TEST(Kernels, NoisyScheduledModelParameterTakesTheGenericPath) {
  spec::Spec s = noisy(l63_spec(), "heun", spec::NoiseKind::additive, {0, 1, 2}, false);
  s.schedule.kind = spec::ScheduleKind::ramp;
  s.schedule.parameter = "forcing";
  s.schedule.from = 1.0;
  s.schedule.to = 3.0;
  s.schedule.start = 0.0;
  s.schedule.end = 5.0;
  EXPECT_EQ(run_at_width(s, 8).kernel, run::KernelKind::generic);
  spec::Spec ring = noisy(l96_spec(), "heun", spec::NoiseKind::additive, {0, 1}, false);
  ring.schedule = s.schedule;
  ring.schedule.parameter = "F";
  ring.schedule.from = 7.0;
  ring.schedule.to = 9.0;
  EXPECT_EQ(run_at_width(ring, 8).kernel, run::KernelKind::generic);
}

// Exact by design (ring_kernel.cpp, sde_step): under stochastic forcing the ring kernel performs
// SdeBatch::step's operations per member, site by site, on ForcingNoise's increments: both
// schemes, the three kinds, per member and shared, all sites or some, no noise, twins and a
// scheduled noise amplitude give every member's numbers bitwise as the generic path (width 21)
// at widths 8 and 40.
TEST(Kernels, NoisyRingEqualsGenericBitwise) {
  using K = spec::NoiseKind;
  std::vector<int> every(40);
  for (int k = 0; k < 40; ++k) every[static_cast<std::size_t>(k)] = k;
  std::vector<spec::Spec> specs = {
      noisy(l96_spec(), "heun", K::additive, every, false),
      noisy(l96_spec(), "euler-maruyama", K::multiplicative, {0, 5, 17, 39}, true),
      noisy(l96_spec(), "heun", K::red, {1, 2, 3}, false),
      noisy(l96_spec(), "euler-maruyama", K::none, {}, false),
  };
  spec::Spec twins = noisy(l96_spec(), "heun", K::additive, {0, 3, 20}, false);
  twins.statistics.twins = {true, 1e-6, 0.25, 0.5};
  specs.push_back(twins);
  spec::Spec scheduled = noisy(l96_spec(), "euler-maruyama", K::red, every, true);
  scheduled.schedule.kind = spec::ScheduleKind::ramp;
  scheduled.schedule.parameter = spec::kNoiseAmplitudeAxis;
  scheduled.schedule.from = 0.1;
  scheduled.schedule.to = 1.0;
  scheduled.schedule.start = 1.0;
  scheduled.schedule.end = 5.0;
  specs.push_back(scheduled);
  for (const spec::Spec& s : specs) {
    SCOPED_TRACE(s.integration.method + " " + spec::noise_kind_name(s.noise.kind) +
                 (s.noise.shared ? " shared" : "") + (s.statistics.twins.enabled ? " twins" : "") +
                 (s.schedule.kind != spec::ScheduleKind::none ? " scheduled" : ""));
    const Campaign generic = run_at_width(s, 21);
    ASSERT_EQ(generic.kernel, run::KernelKind::generic);
    for (int width : {8, 40}) {
      SCOPED_TRACE("width " + std::to_string(width));
      const Campaign ring = run_at_width(s, width);
      ASSERT_EQ(ring.kernel, run::KernelKind::ring);
      expect_same_members(ring, generic, 40);
    }
  }
}

// Exact by design (rk4_ring.hpp): the ring kernel performs Rk4Batch's operations per member;
// width 21 (odd) takes the generic path.
TEST(Kernels, RingLorenz96EqualsGenericBitwise) {
  const Campaign generic = run_at_width(l96_spec(), 21);
  ASSERT_EQ(generic.kernel, run::KernelKind::generic);
  for (int width : {8, 40}) {
    SCOPED_TRACE("width " + std::to_string(width));
    const Campaign ring = run_at_width(l96_spec(), width);
    ASSERT_EQ(ring.kernel, run::KernelKind::ring);
    expect_same_members(ring, generic, 40);
  }
}

// Exact by design: the ring kernel sets a scheduled F per stage time exactly as the generic
// path's ScheduledParameter does (a periodic forcing and a ramp offset by 0.5).
TEST(Kernels, ScheduledRingEqualsGenericBitwise) {
  spec::Spec periodic = l96_spec();
  periodic.schedule.kind = spec::ScheduleKind::periodic;
  periodic.schedule.parameter = "F";
  periodic.schedule.mean = 8.0;
  periodic.schedule.amplitude = 3.0;
  periodic.schedule.period = 0.7;
  periodic.schedule.phase = 0.3;
  spec::Spec ramp = l96_spec();
  ramp.schedule.kind = spec::ScheduleKind::ramp;
  ramp.schedule.parameter = "F";
  ramp.schedule.from = 6.0;
  ramp.schedule.to = 10.0;
  ramp.schedule.start = 0.5;
  ramp.schedule.end = 4.0;
  ramp.sweep = {spec::SweepAxis{"F", {0.5}, {}}};
  ramp.schedule.offset_by_sweep = true;
  for (const spec::Spec& s : {periodic, ramp}) {
    const Campaign generic = run_at_width(s, 21);
    ASSERT_EQ(generic.kernel, run::KernelKind::generic);
    for (int width : {8, 40}) {
      SCOPED_TRACE("width " + std::to_string(width));
      const Campaign ring = run_at_width(s, width);
      ASSERT_EQ(ring.kernel, run::KernelKind::ring);
      expect_same_members(ring, generic, 40);
    }
  }
}

// Exact by design: the fused kernel sets a scheduled parameter per stage time through
// Equations::set, as the generic path's ScheduledParameter sets it in the model: the convection
// loop's forcing on a periodic schedule and its rho on a ramp offset by a sweep, the
// circulation model's F on a ramp.
TEST(Kernels, ScheduledFusedEqualsGenericBitwise) {
  spec::Spec forcing = l63_spec();
  forcing.schedule.kind = spec::ScheduleKind::periodic;
  forcing.schedule.parameter = "forcing";
  forcing.schedule.mean = 2.0;
  forcing.schedule.amplitude = 3.0;
  forcing.schedule.period = 0.9;
  forcing.schedule.phase = 0.1;
  spec::Spec rho = l63_spec();
  rho.schedule.kind = spec::ScheduleKind::ramp;
  rho.schedule.parameter = "rho";
  rho.schedule.from = 24.0;
  rho.schedule.to = 32.0;
  rho.schedule.start = 0.3;
  rho.schedule.end = 5.0;
  rho.sweep = {spec::SweepAxis{"rho", {1.5}, {}}};
  rho.schedule.offset_by_sweep = true;
  spec::Spec circulation = l84_spec();
  circulation.schedule.kind = spec::ScheduleKind::ramp;
  circulation.schedule.parameter = "F";
  circulation.schedule.from = 6.0;
  circulation.schedule.to = 9.0;
  circulation.schedule.start = 0.0;
  circulation.schedule.end = 5.0;
  for (const spec::Spec& s : {forcing, rho, circulation}) {
    SCOPED_TRACE(s.model + " " + s.schedule.parameter);
    const Campaign generic = run_at_width(s, 21);
    ASSERT_EQ(generic.kernel, run::KernelKind::generic);
    for (int width : {8, 40}) {
      SCOPED_TRACE("width " + std::to_string(width));
      const Campaign fused = run_at_width(s, width);
      ASSERT_EQ(fused.kernel, run::KernelKind::fused);
      expect_same_members(fused, generic, 40);
    }
  }
}

/// The response sums of every group summed over the batches (each group of one member lies in
/// one batch; the others add zeros).
std::vector<double> response_sums(const Campaign& r) {
  std::vector<double> total(r.batches.front().response_sums.size(), 0.0);
  for (const run::BatchResult& b : r.batches) {
    for (std::size_t i = 0; i < total.size(); ++i) total[i] += b.response_sums[i];
  }
  return total;
}

/// Response sums every 3 steps with lags to 15 steps, one group per member, so that a group's
/// sums come from one member whatever batch it sits in.
spec::Spec with_response(spec::Spec s) {
  s.statistics.response = {true, 15 * s.integration.dt, 3 * s.integration.dt,
                           static_cast<int>(s.ensemble.members)};
  return s;
}

// Exact by design: the ring kernel records the states of the response samples inside its runs
// of steps (Kernel::tap), the generic path ends its runs there, the fused Lorenz-63 kernel too;
// every member's sums are bitwise the same (widths 8 and 40 against 21).
TEST(Kernels, ResponseSumsEqualTheGenericPathBitwise) {
  for (const spec::Spec& s : {with_response(l96_spec()), with_response(l63_spec())}) {
    SCOPED_TRACE(s.model);
    const Campaign generic = run_at_width(s, 21);
    ASSERT_EQ(generic.kernel, run::KernelKind::generic);
    const std::vector<double> want = response_sums(generic);
    ASSERT_FALSE(want.empty());
    for (int width : {8, 40}) {
      SCOPED_TRACE("width " + std::to_string(width));
      const Campaign fast = run_at_width(s, width);
      ASSERT_NE(fast.kernel, run::KernelKind::generic);
      EXPECT_TRUE(bitwise_equal(response_sums(fast), want));
    }
  }
}

// Exact by design: trajectory samples of the fused and ring kernels equal the scalar reference
// integrator (one member, plain arrays) stepped from the member's initial state.
TEST(Kernels, TrajectoriesEqualTheScalarReference) {
  for (const spec::Spec& s : {l63_spec(), l96_spec()}) {
    SCOPED_TRACE(s.model);
    const Campaign r = run_at_width(s, 8);
    ASSERT_NE(r.kernel, run::KernelKind::generic);
    const auto model = make_model(s.model, s.parameters);
    for (int m : {0, 13, 39}) {
      const Member got = member(r, m);
      std::vector<double> x = got.initial;
      const std::size_t d = x.size();
      for (std::int64_t k = 0; k < r.plan.trajectory_samples; ++k) {
        const std::vector<double> sample(got.trajectory.begin() + k * d,
                                         got.trajectory.begin() + (k + 1) * d);
        ASSERT_TRUE(bitwise_equal(sample, x)) << "member " << m << " sample " << k;
        integrators::rk4_scalar_reference(*model, x.data(), s.integration.dt,
                                          r.plan.trajectory_every_steps);
      }
    }
  }
}

// Exact by construction: with a spin-up as long as the whole run but for one step, every
// accumulator has seen exactly one sample per member (n = 1: NaN variance, fraction 0 or 1,
// minimum = maximum at the time of the last step).
TEST(Kernels, SpinUpFeedsNoAccumulator) {
  spec::Spec s = l63_spec();
  s.integration.spinup = 2.0;
  s.integration.duration = 0.005;
  const Campaign r = run_at_width(s, 8);
  ASSERT_EQ(r.plan.accumulate_steps, 1);
  for (int m = 0; m < 8; ++m) {
    const Member got = member(r, m);
    for (double v : got.variance) EXPECT_TRUE(std::isnan(v));
    EXPECT_TRUE(got.fraction[0] == 0.0 || got.fraction[0] == 1.0);
    EXPECT_EQ(got.fraction[0] + got.fraction[1], 1.0);
    EXPECT_EQ(got.transitions, 0);
    // the one sample is both extremes, taken after the last step
    EXPECT_TRUE(bitwise_equal(got.min, got.max));
    for (double t : got.min_time) EXPECT_EQ(t, static_cast<double>(r.plan.total_steps()) * 0.005);
    for (double t : got.max_time) EXPECT_EQ(t, static_cast<double>(r.plan.total_steps()) * 0.005);
  }
  std::int64_t counted = 0;
  for (std::int64_t c : histogram(r)) counted += c;
  EXPECT_LE(counted, 40);
}

}  // namespace
}  // namespace chaosweep::testing
