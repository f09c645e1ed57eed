// Twin experiments of a batch (run/twins.hpp) and the growth-rate fit (stats/error_growth.hpp).
// The check against a published value (the growth rate of Lorenz-63 twins near its leading
// Lyapunov exponent) runs on a whole campaign in tests/e2e (check_archive.py, twins-growth).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "integrators/rk4.hpp"
#include "numerics_fixtures.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/member_noise.hpp"
#include "run/schedule.hpp"
#include "run/twins.hpp"
#include "spec/spec.hpp"
#include "stats/saved_state.hpp"
#include "stats/error_growth.hpp"

namespace chaosweep::testing {
namespace {

/// The model with default parameters (lorenz63: sigma 10, rho 28, beta 8/3; lorenz96 with n
/// 12), 16 members in batches of 8, spin-up 5.005 (1001 steps,
/// not a multiple of the 32-step finiteness check), 20 time units accumulated, sign regimes and
/// a histogram (so that the fused kernel feeds every accumulator).
spec::Spec base_spec(const std::string& model) {
  spec::Spec s;
  s.name = "twins-test";
  s.model = model;
  s.parameters = models::complete_parameters(model_info(model), {});
  if (model == "lorenz96") {
    s.parameters = models::complete_parameters(model_info(model), {{"n", {12.0}}});
  }
  s.ensemble.members = 16;
  s.ensemble.initial.kind = spec::InitialKind::attractor;
  s.ensemble.initial.spinup = 5.0;
  s.ensemble.perturbation = {spec::Distribution::gaussian, 1e-3};
  s.ensemble.seed = 11;
  s.integration.dt = 0.005;
  s.integration.spinup = 5.005;
  s.integration.duration = 20.0;
  s.statistics.regimes.kind = spec::RegimeKind::sign;
  s.statistics.regimes.observable = "x0";
  if (model == "lorenz63" || model == "lorenz84") s.statistics.regimes.observable = "x";
  s.statistics.regimes.labels = {"positive", "negative"};
  s.output.trajectories = {4, 0.5};
  s.run.batch_size = 8;
  return s;
}

spec::Spec with_twins(spec::Spec s, double scale, double threshold) {
  s.statistics.twins = {true, scale, 0.05, threshold};
  return s;
}

/// Every result of one batch of a campaign (case 0, members 0..7).
run::BatchResult run_batch(const spec::Spec& s) {
  const plan::Plan plan = plan::make_plan(s);
  const run::CaseRunner runner(s, plan, plan.cases[0]);
  return runner.run(plan.batch(0));
}

template <typename T>
void expect_same(const std::vector<T>& a, const std::vector<T>& b, const char* what) {
  ASSERT_EQ(a.size(), b.size()) << what;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if constexpr (std::is_floating_point_v<T>) {
      ASSERT_TRUE(same_bits(a[i], b[i])) << what << "[" << i << "]";
    } else {
      ASSERT_EQ(a[i], b[i]) << what << "[" << i << "]";
    }
  }
}

// Exact by design (run/twins.hpp): the twins are a separate array, so turning them on leaves
// every member statistic bitwise unchanged, for each kernel kind (fused lorenz63, ring
// lorenz96, generic lorenz84).
TEST(Twins, MembersAreBitwiseUnchanged) {
  for (const char* model : {"lorenz63", "lorenz96", "lorenz84"}) {
    SCOPED_TRACE(model);
    const spec::Spec off = base_spec(model);
    const run::BatchResult a = run_batch(off);
    const run::BatchResult b = run_batch(with_twins(off, 1e-8, 0.5));
    expect_same(a.initial_state, b.initial_state, "initial_state");
    expect_same(a.status, b.status, "status");
    expect_same(a.time_mean, b.time_mean, "time_mean");
    expect_same(a.time_variance, b.time_variance, "time_variance");
    expect_same(a.regime_fraction, b.regime_fraction, "regime_fraction");
    expect_same(a.regime_transitions, b.regime_transitions, "regime_transitions");
    expect_same(a.trajectory, b.trajectory, "trajectory");
    EXPECT_TRUE(a.twin_moments.empty());
    EXPECT_EQ(b.twin_moments.size(), 3u * (400 + 1));  // leads 0, 0.05, .., 20
  }
}

// Exact up to rounding: the twin starts scale * u away with |u| = 1, so the separation at lead 0
// is scale up to the rounding of x + scale * u and of the difference: each component is off by
// at most 2^-53 |x| <= 2^-53 * 60 (Lorenz-63 stays within |x|, |y| < 30, 0 < z < 60, from
// memory with margins), a relative error of 2^-53 * 60 * sqrt(3) / 1e-8 < 2e-6 in the
// separation, hence at most 2e-6 in its log.
// Also without a spin-up, when the twins start with the batch at step 0.
TEST(Twins, LeadZeroIsLogScale) {
  for (double spinup : {5.005, 0.0}) {
    spec::Spec s = base_spec("lorenz63");
    s.integration.spinup = spinup;
    const run::BatchResult r = run_batch(with_twins(s, 1e-8, 0.5));
    ASSERT_EQ(r.twin_moments[0], 8.0);  // every pair valid
    EXPECT_NEAR(r.twin_moments[1], std::log(1e-8), 2e-6);
  }
}

// Exact: two points of a bounded attractor are never farther apart than its diameter. For
// Lorenz-63 the diameter is below sqrt(60^2 + 60^2 + 60^2) = 104 (bounds above), while the
// spread (root of the summed variances, about 14 on this attractor: from memory) times 100 is
// far above it; the horizon must be NaN for every member, while with threshold 0.5 every
// member reaches it within the 20 time units (the separation grows like exp(0.9 t) from 1e-4,
// Sprott's leading exponent: 0.5 * 14 is reached after about ln(7e4) / 0.9 = 12 time units).
TEST(Twins, HorizonIsNaNWhenTheThresholdIsUnreachable) {
  const spec::Spec s = base_spec("lorenz63");
  const run::BatchResult far = run_batch(with_twins(s, 1e-4, 100.0));
  const run::BatchResult near = run_batch(with_twins(s, 1e-4, 0.5));
  for (int j = 0; j < far.count; ++j) {
    EXPECT_GT(far.spread[j], 1.0);
    EXPECT_TRUE(std::isnan(far.horizon[j])) << j;
    EXPECT_TRUE(std::isfinite(near.horizon[j])) << j;
    EXPECT_GT(near.horizon[j], 0.0);
  }
  expect_same(far.twin_moments, near.twin_moments, "twin_moments");  // threshold-independent
}

// Exact by design (run/twins.hpp): members started far off the attractor with a large step
// overflow; their pairs leave the twin moments and get NaN spread and horizon, while the other
// members' pairs count at every lead.
TEST(Twins, NonFiniteMembersAreLeftOut) {
  spec::Spec s = base_spec("lorenz63");
  s.ensemble.initial.kind = spec::InitialKind::given;
  s.ensemble.initial.state = {1.0, 1.0, 20.0};
  s.ensemble.perturbation = {spec::Distribution::gaussian, 300.0};
  s.integration.dt = 0.01;
  s.integration.spinup = 1.0;
  s.integration.duration = 5.0;
  const run::BatchResult r = run_batch(with_twins(s, 1e-6, 0.5));
  int valid = 0;
  for (int j = 0; j < r.count; ++j) {
    if (r.status[j] == run::kValid) {
      ++valid;
      EXPECT_TRUE(std::isfinite(r.spread[j])) << j;
    } else {
      EXPECT_TRUE(std::isnan(r.spread[j])) << j;
      EXPECT_TRUE(std::isnan(r.horizon[j])) << j;
    }
  }
  ASSERT_GE(valid, 1) << "the campaign needs a valid member";
  ASSERT_LT(valid, r.count) << "and a non-finite one";
  for (std::size_t k = 0; k < r.twin_moments.size(); k += 3) {
    EXPECT_EQ(r.twin_moments[k], static_cast<double>(valid)) << "lead " << k / 3;
    EXPECT_TRUE(std::isfinite(r.twin_moments[k + 1])) << "lead " << k / 3;
  }
}

// Exact: the direction is a unit vector, drawn from a stream other than the perturbation's.
TEST(Twins, DirectionIsAUnitVectorOfItsOwnStream) {
  for (std::int64_t member = 0; member < 20; ++member) {
    const std::vector<double> u = run::twin_direction(11, 2, member, 40);
    double norm2 = 0.0;
    for (double v : u) norm2 += v * v;
    EXPECT_NEAR(norm2, 1.0, 1e-14);
    const run::MemberNoise perturbation(11, 2, member);
    EXPECT_NE(u[0], perturbation.gaussian(0));
  }
}

// Exact: least squares through points on a line returns the line's slope; the window is the
// part of the curve between 10% and 70% of its rise (stats/error_growth.hpp). The curve here
// is flat at -10 up to t = 1, rises with slope 0.9 up to 0, then is flat.
/// The named real array of a saved batch state.
std::vector<double> saved(const run::BatchState& state, const std::string& name) {
  for (const auto& [key, values] : state.reals) {
    if (key == name) return values;
  }
  ADD_FAILURE() << "no saved array " << name;
  return {};
}

/// `x` ([3][8]) advanced over steps first+1 .. last by Rk4Batch::step_at with the forcing set
/// at every stage time by `schedule` (step n from n dt to (n + 1) dt).
std::vector<double> scheduled_rk4(std::vector<double> x, const spec::Spec& s, std::int64_t first,
                                  std::int64_t last) {
  auto model = make_model(s.model, s.parameters);
  run::ScheduledParameter clock(*model, s.schedule, 0.0);
  integrators::Rk4Batch rk4(*model, 8);
  for (std::int64_t n = first; n < last; ++n) {
    const run::StepTimes t = run::step_times(n, s.integration.dt);
    rk4.step_at(x.data(), s.integration.dt, t.t0, t.t1, clock);
  }
  return x;
}

// Under a schedule a twin sees the forcing at the same stage times as its member: from the
// twins' start (step S, the end of the spin-up) the twin array is exactly the scheduled RK4
// integration (Rk4Batch::step_at, checked against closed-form solutions in test_schedule.cpp)
// of its start state over steps S+1 .., as the members' array is of theirs (exact by design:
// the same operations). The same integration with the stage times of steps 1 .. (a twin
// kernel not told the step) must differ, or this test could not see that error.
TEST(Twins, TwinsFollowTheScheduleAtTheMembersStageTimes) {
  spec::Spec s = with_twins(base_spec("lorenz63"), 1e-3, 0.5);
  s.schedule.kind = spec::ScheduleKind::ramp;
  s.schedule.parameter = "forcing";
  s.schedule.from = 0.0;
  s.schedule.to = 6.0;
  s.schedule.start = 0.0;
  s.schedule.end = 25.0;
  const plan::Plan plan = plan::make_plan(s);
  const run::CaseRunner runner(s, plan, plan.cases[0]);
  const std::unique_ptr<run::BatchProgress> batch = runner.start(plan.batch(0));
  const std::int64_t start = plan.spinup_steps, steps = 137;
  batch->advance(start);
  const run::BatchState at_start = batch->save();
  batch->advance(steps);
  const run::BatchState later = batch->save();
  ASSERT_EQ(later.step, start + steps);
  const std::vector<double> twins = saved(later, "twins.state");
  expect_same(scheduled_rk4(saved(at_start, "twins.state"), s, start, start + steps), twins,
              "twins.state");
  expect_same(scheduled_rk4(saved(at_start, "state"), s, start, start + steps),
              saved(later, "state"), "state");
  const std::vector<double> from_zero = scheduled_rk4(saved(at_start, "twins.state"), s, 0, steps);
  EXPECT_NE(from_zero, twins);
}

TEST(Twins, GrowthFitRecoversTheSlopeOfALinearPhase) {
  std::vector<double> t, L;
  for (int k = 0; k <= 400; ++k) {
    const double tk = 0.05 * k;
    t.push_back(tk);
    L.push_back(std::min(0.0, tk < 1.0 ? -10.0 : -10.0 + 0.9 * (tk - 1.0)));
  }
  const std::vector<double> se(t.size(), 0.05);
  const stats::GrowthFit fit = stats::fit_growth_rate(t, L, se);
  EXPECT_EQ(fit.outcome, stats::GrowthOutcome::fitted);
  EXPECT_TRUE(fit.note.empty());
  EXPECT_NEAR(fit.rate, 0.9, 1e-12);
  EXPECT_NEAR(fit.intercept, -10.9, 1e-12);  // the line -10 + 0.9 (t - 1)
  // 10% of the rise of 10 is reached at t = 1 + 1/0.9, 70% at t = 1 + 7/0.9 (first leads at or
  // above these levels).
  EXPECT_NEAR(fit.start, 0.05 * std::ceil((1.0 + 1.0 / 0.9) / 0.05 - 1e-9), 1e-12);
  EXPECT_NEAR(fit.end, 0.05 * std::ceil((1.0 + 7.0 / 0.9) / 0.05 - 1e-9), 1e-12);
  // One pair: no standard error, so the rise cannot be tested (neither a rate nor a claim that
  // the twins do not separate).
  const std::vector<double> none(t.size(), std::nan(""));
  const stats::GrowthFit single = stats::fit_growth_rate(t, L, none);
  EXPECT_EQ(single.outcome, stats::GrowthOutcome::untestable);
  EXPECT_FALSE(single.not_separating());
  const stats::GrowthFit flat = stats::fit_growth_rate({0, 1, 2}, {1, 1, 1}, {0, 0.1, 0.1});
  EXPECT_TRUE(std::isnan(flat.rate));
  EXPECT_EQ(flat.outcome, stats::GrowthOutcome::no_rise);
  EXPECT_TRUE(flat.not_separating());
}

// Exact: on a periodic orbit the separation of a twin follows the speed along the orbit, so
// its mean log oscillates about its start. A curve L = L0 + 2 sin(2 pi t / 5) rises by 2 (far
// beyond its standard errors of 0.05) and falls back: no rate, whatever its first flank looks
// like. The same curve lifted after its first swing (a separation that grew and stayed, 1.5
// above its start at the lowest, 21 standard errors) keeps a fit.
TEST(Twins, GrowthFitRefusesARiseThatFallsBack) {
  std::vector<double> t, L, held;
  for (int k = 0; k <= 200; ++k) {
    const double tk = 0.1 * k;
    t.push_back(tk);
    const double swing = 2.0 * std::sin(2.0 * M_PI * tk / 5.0);
    L.push_back(-18.0 + swing);
    held.push_back(-18.0 + (tk < 1.25 ? swing : 2.5 + 0.5 * swing));
  }
  const std::vector<double> se(t.size(), 0.05);
  const stats::GrowthFit fit = stats::fit_growth_rate(t, L, se);
  EXPECT_TRUE(std::isnan(fit.rate));
  EXPECT_TRUE(std::isnan(fit.start));
  EXPECT_EQ(fit.outcome, stats::GrowthOutcome::not_sustained);
  EXPECT_TRUE(fit.not_separating());
  EXPECT_NE(fit.note.find("no significant sustained rise"), std::string::npos) << fit.note;
  const stats::GrowthFit kept = stats::fit_growth_rate(t, held, se);
  EXPECT_EQ(kept.outcome, stats::GrowthOutcome::fitted) << kept.note;
  EXPECT_GT(kept.rate, 0.0);
}

// Exact: the one-sided test compares L_k - L_0 with 3 sqrt(se_k^2 + se_0^2) from the window's
// end on. A curve that rises to 1 and holds, its window ending at 0.7, passes with standard
// errors of 0.2 (0.7 is 3.5 of them) and fails with 0.25 (2.8 of them).
TEST(Twins, GrowthFitSignificanceUsesTheStandardErrors) {
  std::vector<double> t, L;
  for (int k = 0; k <= 20; ++k) {
    t.push_back(k);
    L.push_back(std::min(1.0, 0.1 * k));
  }
  std::vector<double> se(t.size(), 0.2);
  se[0] = 0.0;
  EXPECT_EQ(stats::fit_growth_rate(t, L, se).outcome, stats::GrowthOutcome::fitted);
  std::fill(se.begin() + 1, se.end(), 0.25);
  EXPECT_EQ(stats::fit_growth_rate(t, L, se).outcome, stats::GrowthOutcome::not_sustained);
}

// Exact: for L = a + r t with across-pair sd s(t) = s_end sqrt(t / t_end), the lead solving
// a + r t - z s(t) = level, z = 1.2815515655446004 (the normal 0.9 quantile, GSL), satisfies
// that equation; with s_end = 0 it is (level - a) / r.
TEST(Twins, LeadForShareSolvesTheExtrapolation) {
  stats::GrowthFit fit;
  fit.outcome = stats::GrowthOutcome::fitted;
  fit.rate = 0.5;
  fit.intercept = -18.0;
  fit.start = 2.0;
  fit.end = 20.0;
  const double level = -1.0;
  EXPECT_NEAR(stats::lead_for_share(fit, 0.0, level, 0.9), 34.0, 1e-12);
  const double t = stats::lead_for_share(fit, 3.0, level, 0.9);
  const double z = 1.2815515655446004;
  EXPECT_NEAR(-18.0 + 0.5 * t - z * 3.0 * std::sqrt(t / 20.0), level, 1e-10);
  EXPECT_GT(t, 34.0);
  fit.outcome = stats::GrowthOutcome::not_sustained;
  EXPECT_TRUE(std::isnan(stats::lead_for_share(fit, 3.0, level, 0.9)));
}

}  // namespace
}  // namespace chaosweep::testing
