// Time-dependent parameters (spec `schedule:`) and ensemble snapshots: the schedule's formulas,
// the models' in-place parameter setters, RK4 stage times checked against closed-form
// solutions, and the snapshot statistics of a batch against its stored trajectories.
#include <gtest/gtest.h>

#include <cctype>
#include <cmath>
#include <memory>
#include <string>
#include <vector>

#include "integrators/rk4.hpp"
#include "numerics_fixtures.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/schedule.hpp"
#include "spec/spec.hpp"

namespace chaosweep::testing {
namespace {

spec::Schedule ramp(double from, double to, double start, double end) {
  spec::Schedule s;
  s.kind = spec::ScheduleKind::ramp;
  s.parameter = "F";
  s.from = from;
  s.to = to;
  s.start = start;
  s.end = end;
  return s;
}

spec::Schedule periodic(double mean, double amplitude, double period, double phase) {
  spec::Schedule s;
  s.kind = spec::ScheduleKind::periodic;
  s.parameter = "F";
  s.mean = mean;
  s.amplitude = amplitude;
  s.period = period;
  s.phase = phase;
  return s;
}

// ---- the schedule's formulas (exact: the definitions in spec::Schedule) ---------------------

TEST(ParameterSchedule, RampHoldsItsEndValuesOutsideTheRampAndIsLinearInside) {
  const run::ParameterSchedule r(ramp(2.0, 6.0, 10.0, 30.0), 0.0);
  EXPECT_EQ(r.at(0.0), 2.0);
  EXPECT_EQ(r.at(10.0), 2.0);
  EXPECT_EQ(r.at(20.0), 4.0);  // halfway: (from + to) / 2, exact in binary
  EXPECT_EQ(r.at(15.0), 3.0);
  EXPECT_EQ(r.at(30.0), 6.0);
  EXPECT_EQ(r.at(1e6), 6.0);
}

TEST(ParameterSchedule, StepSwitchesAtItsTimeAndTheOffsetIsAdded) {
  spec::Schedule s;
  s.kind = spec::ScheduleKind::step;
  s.before = 8.0;
  s.after = 10.0;
  s.at = 5.0;
  const run::ParameterSchedule step(s, 0.5);
  EXPECT_EQ(step.at(4.999), 8.5);
  EXPECT_EQ(step.at(5.0), 10.5);  // `after` from `at` on
  s.kind = spec::ScheduleKind::constant;
  s.value = 7.25;
  EXPECT_EQ(run::ParameterSchedule(s, 0.0).at(123.0), 7.25);
  EXPECT_EQ(run::ParameterSchedule(s, -1.25).at(0.0), 6.0);
}

TEST(ParameterSchedule, PeriodicIsASineOfTimeWithThePhaseInRadians) {
  // mean + amplitude sin(2 pi t / period + phase): a quarter period after t = 0 with phase 0 is
  // the maximum; phase pi/2 puts the maximum at t = 0 (to rounding of pi and sin: 1e-15).
  const run::ParameterSchedule p(periodic(8.0, 2.0, 4.0, 0.0), 0.0);
  EXPECT_NEAR(p.at(0.0), 8.0, 1e-15);
  EXPECT_NEAR(p.at(1.0), 10.0, 1e-15);
  EXPECT_NEAR(p.at(3.0), 6.0, 1e-14);
  const run::ParameterSchedule shifted(periodic(8.0, 2.0, 4.0, M_PI / 2.0), 0.0);
  EXPECT_NEAR(shifted.at(0.0), 10.0, 1e-15);
}

// ---- models: the in-place setter equals a rebuilt model, bitwise ----------------------------

class ParameterSetter : public ::testing::TestWithParam<std::string> {};

// Exact by design (Model::set_parameter's contract): for every model and every scalar,
// non-structural parameter, setting it in place gives bitwise the right-hand side (and
// tangent) of a model built with that value.
TEST_P(ParameterSetter, EqualsAModelBuiltWithTheValue) {
  const models::ModelInfo& info = model_info(GetParam());
  const int width = 16;
  for (const models::ParameterInfo& p : info.parameters) {
    if (p.structural || p.default_value.size() != 1) continue;
    SCOPED_TRACE(p.name);
    const double value = p.default_value[0] * 1.1 + 0.3;
    auto changed = make_model(info.name);
    const int slot = changed->parameter_slot(p.name);
    ASSERT_GE(slot, 0) << info.name << " cannot set " << p.name;
    changed->set_parameter(slot, value);
    const auto built = make_model(info.name, {{p.name, {value}}});
    const int d = built->state_dim();
    const std::vector<double> x =
        random_batch(built->default_initial_state(), 2.0, width, 17);
    const std::vector<double> v = random_batch(std::vector<double>(d, 0.0), 1.0, width, 18);
    std::vector<double> a(x.size()), b(x.size());
    changed->rhs(x.data(), a.data(), width);
    built->rhs(x.data(), b.data(), width);
    for (std::size_t i = 0; i < a.size(); ++i) ASSERT_TRUE(same_bits(a[i], b[i])) << i;
    if (built->has_tangent()) {
      changed->tangent(x.data(), v.data(), a.data(), width);
      built->tangent(x.data(), v.data(), b.data(), width);
      for (std::size_t i = 0; i < a.size(); ++i) ASSERT_TRUE(same_bits(a[i], b[i])) << i;
    }
  }
  EXPECT_EQ(make_model(info.name)->parameter_slot("no-such-parameter"), -1);
}

INSTANTIATE_TEST_SUITE_P(Registry, ParameterSetter,
                         ::testing::ValuesIn(models::Registry::instance().names()),
                         [](const auto& p) {
                           std::string name = p.param;
                           for (char& c : name) c = std::isalnum(static_cast<unsigned char>(c)) ? c : '_';
                           return name;
                         });

// ---- RK4 stage times against closed-form solutions ------------------------------------------
//
// On a uniform Lorenz-96 state x_k = X the advection term (x_{k+1} - x_{k-2}) x_{k-1} vanishes
// exactly (also in floating point), so every site follows the scalar linear equation
//   dX/dt = -X + F(t)
// (exact, from the equations). Its solutions are closed forms:
//   F = a constant:            X(t) = a + (X(t0) - a) e^{-(t - t0)}
//   F = a + g (t - t0) (ramp):  X(t) = a + g (t - t0) - g + (X(t0) - a + g) e^{-(t - t0)}
//   F = m + A sin(w t + p):     X(t) = P(t) + (X(0) - P(0)) e^{-t},
//                               P(t) = m + A (sin(w t + p) - w cos(w t + p)) / (1 + w^2)
// RK4's global error on these smooth pieces is far below 1e-9 at dt = 0.01 (order 4,
// Hairer, Norsett & Wanner 1993), while evaluating F at the wrong stage time (e.g. the step's
// start for every stage) makes an O(dt) error of about 1e-2 here.

/// Sets F on `model` from a schedule at each stage time: what the scheduled kernel does.
class ScheduleClock final : public integrators::Rk4Batch::StageClock {
 public:
  ScheduleClock(models::Model& model, const run::ParameterSchedule& s, bool wrong)
      : model_(model), slot_(model.parameter_slot("F")), schedule_(s), wrong_(wrong) {}
  void set_time(double t) override {
    if (wrong_ && have_start_) t = start_;  // the deliberate error: every stage at t0
    if (!have_start_) start_ = t, have_start_ = true;
    model_.set_parameter(slot_, schedule_.at(t));
  }
  void next_step() { have_start_ = false; }

 private:
  models::Model& model_;
  int slot_;
  const run::ParameterSchedule& schedule_;
  bool wrong_;
  bool have_start_ = false;
  double start_ = 0.0;
};

/// Integrates a uniform 8-site Lorenz-96 state X0 over `steps` steps under schedule `s`;
/// returns X at each step (0 .. steps).
std::vector<double> uniform_ring(const spec::Schedule& s, double x0, double dt, int steps,
                                 bool wrong_stage_times = false) {
  const int width = 8, n = 8;
  auto model = make_model("lorenz96", {{"n", {double(n)}}});
  const run::ParameterSchedule schedule(s, 0.0);
  ScheduleClock clock(*model, schedule, wrong_stage_times);
  integrators::Rk4Batch rk4(*model, width);
  std::vector<double> x(static_cast<std::size_t>(n) * width, x0);
  std::vector<double> out{x0};
  for (int i = 0; i < steps; ++i) {
    clock.next_step();
    rk4.step_at(x.data(), dt, i * dt, (i + 1) * dt, clock);
    for (double v : x) EXPECT_EQ(v, x[0]) << "the state stays uniform";
    out.push_back(x[0]);
  }
  return out;
}

/// X(t) under the ramp F: from before start, linear to `to` at end, constant after.
double ramp_solution(double t, double x0, double from, double to, double start, double end) {
  const double g = (to - from) / (end - start);
  if (t <= start) return from + (x0 - from) * std::exp(-t);
  const double xs = from + (x0 - from) * std::exp(-start);
  if (t <= end) {
    return from + g * (t - start) - g + (xs - from + g) * std::exp(-(t - start));
  }
  const double xe = from + g * (end - start) - g + (xs - from + g) * std::exp(-(end - start));
  return to + (xe - to) * std::exp(-(t - end));
}

TEST(ScheduledRk4, RampMatchesTheClosedFormOfTheUniformRing) {
  const double dt = 0.01, x0 = 1.0, from = 2.0, to = 10.0, start = 0.5, end = 1.5;
  const int steps = 300;
  const std::vector<double> x = uniform_ring(ramp(from, to, start, end), x0, dt, steps);
  const std::vector<double> wrong =
      uniform_ring(ramp(from, to, start, end), x0, dt, steps, /*wrong_stage_times=*/true);
  double worst = 0.0, worst_wrong = 0.0;
  for (int i = 0; i <= steps; ++i) {
    const double exact = ramp_solution(i * dt, x0, from, to, start, end);
    worst = std::max(worst, std::abs(x[i] - exact));
    worst_wrong = std::max(worst_wrong, std::abs(wrong[i] - exact));
  }
  // Exact (closed form above); 1e-9 bounds RK4's error on the smooth pieces (the ramp's kinks
  // at 0.5 and 1.5 fall on step boundaries).
  EXPECT_LT(worst, 1e-9);
  // The same test with every stage at the step's start is off by about g dt / 2 = 0.04:
  // the check can fail.
  EXPECT_GT(worst_wrong, 1e-3);
}

TEST(ScheduledRk4, PeriodicForcingMatchesTheClosedFormOfTheUniformRing) {
  const double dt = 0.01, x0 = 3.0, m = 8.0, A = 2.0, period = 1.7, phase = 0.3;
  const int steps = 500;
  const double w = 2.0 * M_PI / period;
  auto particular = [&](double t) {
    return m + A * (std::sin(w * t + phase) - w * std::cos(w * t + phase)) / (1.0 + w * w);
  };
  const std::vector<double> x = uniform_ring(periodic(m, A, period, phase), x0, dt, steps);
  double worst = 0.0;
  for (int i = 0; i <= steps; ++i) {
    const double t = i * dt;
    const double exact = particular(t) + (x0 - particular(0.0)) * std::exp(-t);
    worst = std::max(worst, std::abs(x[i] - exact));
  }
  // Exact closed form; RK4's global error here is about T dt^4 w^5 A / 120 ~ 1e-10.
  EXPECT_LT(worst, 1e-8);
}

// The same closed form through the whole batch machinery (CaseRunner, the scheduled kernel,
// chunked advance): a campaign whose members all start uniform, without perturbation, stores
// its trajectories every 0.1; the spin-up to the attractor is not used (given state).
TEST(ScheduledRk4, CampaignTrajectoriesFollowTheRampClosedForm) {
  spec::Spec s;
  s.name = "ramp-closed-form";
  s.model = "lorenz96";
  s.parameters = models::complete_parameters(model_info("lorenz96"), {{"n", {8.0}}});
  s.schedule = ramp(2.0, 10.0, 0.5, 1.5);
  s.ensemble.members = 8;
  s.ensemble.initial.kind = spec::InitialKind::given;
  s.ensemble.initial.state.assign(8, 1.0);
  s.ensemble.perturbation = {spec::Distribution::gaussian, 0.0};
  s.ensemble.seed = 1;
  s.integration.dt = 0.01;
  s.integration.spinup = 0.3;
  s.integration.duration = 2.7;
  s.output.trajectories = {2, 0.1};
  s.statistics.snapshots = {true, 0.5};
  s.run.batch_size = 8;
  const plan::Plan plan = plan::make_plan(s);
  const run::CaseRunner runner(s, plan, plan.cases[0]);
  const auto progress = runner.start(plan.batch(0));
  while (!progress->done()) progress->advance(37);  // chunks across every event
  const run::BatchResult r = progress->finish();
  double worst = 0.0;
  for (std::int64_t k = 0; k < plan.trajectory_samples; ++k) {
    const double t = static_cast<double>(k * plan.trajectory_every_steps) * s.integration.dt;
    const double exact = ramp_solution(t, 1.0, 2.0, 10.0, 0.5, 1.5);
    worst = std::max(worst, std::abs(r.trajectory[static_cast<std::size_t>(k) * 8] - exact));
  }
  EXPECT_LT(worst, 1e-9);  // as above: exact closed form, RK4 error far below
  // Every member is the same uniform state, so the snapshot mean of x0 at t_k = 0.3 + 0.5 k is
  // the closed form too, with zero variance (exact: identical members).
  ASSERT_EQ(plan.snapshot_count, 6);
  for (int k = 0; k < 6; ++k) {
    const double* m = &r.snapshot_moments[k * plan.observables.size() * 3];  // x0
    EXPECT_EQ(m[0], 8.0);
    EXPECT_NEAR(m[1], ramp_solution(0.3 + 0.5 * k, 1.0, 2.0, 10.0, 0.5, 1.5), 1e-9);
    EXPECT_EQ(m[2], 0.0);
  }
}

// ---- snapshots: per-batch statistics over the valid members ---------------------------------

// Exact by design (run/snapshots.hpp): with every member's trajectory stored at the snapshot
// times, the batch's snapshot moments equal the mean and sum of squared deviations of the
// valid members' stored values (two-pass, to 1e-12 relative: Chan, Golub & LeVeque 1983 bound
// the one-pass error far below that for 8 values), and members that became non-finite during
// the run are left out of every snapshot, also those taken before they blew up.
TEST(Snapshots, BatchMomentsEqualTwoPassStatisticsOfTheValidMembers) {
  spec::Spec s;
  s.name = "snapshot-batch";
  s.model = "lorenz63";
  s.parameters = models::complete_parameters(model_info("lorenz63"), {});
  s.ensemble.members = 8;
  s.ensemble.initial.kind = spec::InitialKind::given;
  s.ensemble.initial.state = {1.0, 1.0, 20.0};
  s.ensemble.perturbation = {spec::Distribution::gaussian, 300.0};  // some members blow up
  s.ensemble.seed = 77;
  s.integration.dt = 0.01;
  s.integration.spinup = 0.5;
  s.integration.duration = 3.0;
  s.statistics.observables = {"x", "z"};
  s.statistics.regimes.kind = spec::RegimeKind::sign;
  s.statistics.regimes.observable = "x";
  s.statistics.regimes.labels = {"positive", "negative"};
  s.statistics.snapshots = {true, 0.5};
  s.output.trajectories = {8, 0.5};
  s.run.batch_size = 8;
  const plan::Plan plan = plan::make_plan(s);
  const run::CaseRunner runner(s, plan, plan.cases[0]);
  const run::BatchResult r = runner.run(plan.batch(0));
  int valid = 0;
  for (std::uint8_t st : r.status) valid += st == run::kValid;
  ASSERT_GE(valid, 2);
  ASSERT_LE(valid, 7) << "the test needs a member that became non-finite";
  ASSERT_EQ(plan.snapshot_count, 7);
  for (int k = 0; k < 7; ++k) {
    const std::int64_t sample = 1 + k;  // trajectory sample at t = 0.5 (1 + k)
    int in_positive = 0;
    for (int o = 0; o < 2; ++o) {
      const int var = o == 0 ? 0 : 2;  // x, z
      std::vector<double> values;
      for (int j = 0; j < 8; ++j) {
        if (r.status[j] != run::kValid) continue;
        const double v =
            r.trajectory[(static_cast<std::size_t>(j) * plan.trajectory_samples + sample) * 3 + var];
        values.push_back(v);
        if (o == 0 && v >= 0.0) ++in_positive;
      }
      double mean = 0.0, m2 = 0.0;
      for (double v : values) mean += v / values.size();
      for (double v : values) m2 += (v - mean) * (v - mean);
      const double* m = &r.snapshot_moments[(static_cast<std::size_t>(k) * 2 + o) * 3];
      EXPECT_EQ(m[0], static_cast<double>(valid));
      EXPECT_NEAR(m[1], mean, 1e-12 * (1.0 + std::abs(mean)));
      EXPECT_NEAR(m[2], m2, 1e-12 * (1.0 + m2));
    }
    EXPECT_EQ(r.snapshot_regimes[static_cast<std::size_t>(k) * 2], in_positive);
    EXPECT_EQ(r.snapshot_regimes[static_cast<std::size_t>(k) * 2 + 1], valid - in_positive);
  }
}

}  // namespace
}  // namespace chaosweep::testing
