// Per-member extremes: the accumulator (stats/extremes.hpp) against the standard library's
// std::min_element and std::max_element, and every kernel's extremes of a batch against the
// samples of an independent scalar re-integration of each member.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "integrators/reference.hpp"
#include "numerics_fixtures.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/batch_work.hpp"
#include "run/kernels.hpp"
#include "run/schedule.hpp"
#include "spec/spec.hpp"
#include "stats/extremes.hpp"

namespace chaosweep::testing {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// `count` values drawn from a few levels, so that equal values (ties) are frequent; -0.0 and
/// +0.0 are among them.
std::vector<double> tied_series(std::mt19937_64& gen, int count) {
  static const double levels[] = {-2.5, -1.0, -0.0, 0.0, 0.75, 3.0, 1e300, -1e-300};
  std::uniform_int_distribution<int> pick(0, 7);
  std::vector<double> v(static_cast<std::size_t>(count));
  for (double& x : v) x = levels[pick(gen)];
  return v;
}

/// member-major series [width][count] into the columns of an accumulator of `series` = 1.
stats::Extremes accumulate(const std::vector<std::vector<double>>& members) {
  const int width = static_cast<int>(members.size());
  stats::Extremes e(1, width);
  std::vector<double> column(static_cast<std::size_t>(width));
  const double* columns[] = {column.data()};
  for (std::size_t k = 0; k < members[0].size(); ++k) {
    for (int m = 0; m < width; ++m) column[m] = members[m][k];
    e.add(columns);
  }
  return e;
}

// Outside check: std::min_element and std::max_element (C++17 [alg.min.max]) return the first
// smallest and the first largest element under operator<; -0.0 < +0.0 is false there as here,
// so among zeros of either sign the first one is kept. Values compared bit for bit.
TEST(Extremes, EqualMinElementAndMaxElementOnSeriesWithTies) {
  std::mt19937_64 gen(11);
  for (int count : {1, 2, 7, 64, 301}) {
    std::vector<std::vector<double>> members;
    for (int m = 0; m < 5; ++m) members.push_back(tied_series(gen, count));
    const stats::Extremes e = accumulate(members);
    EXPECT_EQ(e.count(), count);
    for (int m = 0; m < 5; ++m) {
      const std::vector<double>& v = members[m];
      const auto lo = std::min_element(v.begin(), v.end());
      const auto hi = std::max_element(v.begin(), v.end());
      EXPECT_TRUE(same_bits(e.min(0, m), *lo)) << count << " member " << m;
      EXPECT_TRUE(same_bits(e.max(0, m), *hi)) << count << " member " << m;
      EXPECT_EQ(e.min_at(0, m), lo - v.begin()) << count << " member " << m;
      EXPECT_EQ(e.max_at(0, m), hi - v.begin()) << count << " member " << m;
    }
  }
}

// Outside check: std::min_element / std::max_element again, on continuous random values with
// several series side by side (series s of member m at column m of row s).
TEST(Extremes, SeveralSeriesAreIndependent) {
  std::mt19937_64 gen(12);
  std::normal_distribution<double> normal(3.0, 10.0);
  const int series = 3, width = 4, count = 500;
  std::vector<double> values(static_cast<std::size_t>(count) * series * width);
  for (double& x : values) x = normal(gen);
  stats::Extremes e(series, width);
  for (int k = 0; k < count; ++k) {
    const double* row = values.data() + static_cast<std::size_t>(k) * series * width;
    const double* columns[] = {row, row + width, row + 2 * width};
    e.add(columns);
  }
  for (int s = 0; s < series; ++s) {
    for (int m = 0; m < width; ++m) {
      std::vector<double> v;
      for (int k = 0; k < count; ++k) v.push_back(values[(k * series + s) * width + m]);
      const auto lo = std::min_element(v.begin(), v.end());
      const auto hi = std::max_element(v.begin(), v.end());
      EXPECT_TRUE(same_bits(e.min(s, m), *lo));
      EXPECT_TRUE(same_bits(e.max(s, m), *hi));
      EXPECT_EQ(e.min_at(s, m), lo - v.begin());
      EXPECT_EQ(e.max_at(s, m), hi - v.begin());
    }
  }
}

/// Runs of random lengths (1 .. 32, as a kernel's segments) folded by add_run, or by fold()
/// and merge_run() as a fused kernel does, into a scalar member's extremes.
struct RunExtremes {
  double lo = stats::Extremes::kInfinity, hi = -stats::Extremes::kInfinity;
  std::int64_t lo_at = -1, hi_at = -1;
};

// Outside check: std::min_element / std::max_element over the whole series, whichever way it
// is cut into runs; add_run and fold() + merge_run() must also agree with each other.
TEST(Extremes, RunsEqualMinElementAndMaxElementForAnyCut) {
  std::mt19937_64 gen(13);
  std::uniform_int_distribution<int> length(1, 32);
  for (int trial = 0; trial < 200; ++trial) {
    const std::vector<double> v = tied_series(gen, 1 + trial * 3);
    RunExtremes a, b;
    std::int64_t first = 0;
    while (first < static_cast<std::int64_t>(v.size())) {
      const int steps =
          static_cast<int>(std::min<std::int64_t>(length(gen), v.size() - first));
      auto sample = [&](int t) { return v[first + t]; };
      stats::Extremes::add_run(sample, steps, first, a.lo, a.lo_at, a.hi, a.hi_at);
      double run_lo = stats::Extremes::kInfinity, run_hi = -stats::Extremes::kInfinity;
      for (int t = 0; t < steps; ++t) stats::Extremes::fold(sample(t), run_lo, run_hi);
      stats::Extremes::merge_run(sample, steps, first, run_lo, run_hi, b.lo, b.lo_at, b.hi,
                                 b.hi_at);
      first += steps;
    }
    const auto lo = std::min_element(v.begin(), v.end());
    const auto hi = std::max_element(v.begin(), v.end());
    for (const RunExtremes& r : {a, b}) {
      EXPECT_TRUE(same_bits(r.lo, *lo)) << "trial " << trial;
      EXPECT_TRUE(same_bits(r.hi, *hi)) << "trial " << trial;
      EXPECT_EQ(r.lo_at, lo - v.begin()) << "trial " << trial;
      EXPECT_EQ(r.hi_at, hi - v.begin()) << "trial " << trial;
    }
  }
}

using Vec4 = double __attribute__((vector_size(4 * sizeof(double))));
using Int4 = std::int64_t __attribute__((vector_size(4 * sizeof(std::int64_t))));

// Exact by design (extremes.hpp): on a GCC vector of members the per-sample rule and the runs
// give, element by element, what the scalar rule gives each member; std::min_element and
// std::max_element are the outside reference for the scalar rule.
TEST(Extremes, VectorsOfMembersEqualEachMemberAlone) {
  std::mt19937_64 gen(14);
  std::uniform_int_distribution<int> length(1, 32);
  const int count = 400;
  std::vector<std::vector<double>> members;
  for (int k = 0; k < 4; ++k) members.push_back(tied_series(gen, count));
  auto lanes = [&](std::int64_t k) {
    return Vec4{members[0][k], members[1][k], members[2][k], members[3][k]};
  };
  Vec4 lo = Vec4{} + stats::Extremes::kInfinity, hi = Vec4{} - stats::Extremes::kInfinity;
  Int4 lo_at = Int4{} - 1, hi_at = Int4{} - 1;
  Vec4 run_lo = lo, run_hi = hi;
  Int4 run_lo_at = lo_at, run_hi_at = hi_at;
  for (std::int64_t k = 0; k < count; ++k) {
    stats::Extremes::add_sample(lanes(k), Int4{} + k, lo, lo_at, hi, hi_at);
  }
  for (std::int64_t first = 0; first < count;) {
    const int steps = static_cast<int>(std::min<std::int64_t>(length(gen), count - first));
    stats::Extremes::add_run([&](int t) { return lanes(first + t); }, steps, first, run_lo,
                             run_lo_at, run_hi, run_hi_at);
    first += steps;
  }
  for (int m = 0; m < 4; ++m) {
    const std::vector<double>& v = members[m];
    const auto vlo = std::min_element(v.begin(), v.end());
    const auto vhi = std::max_element(v.begin(), v.end());
    EXPECT_TRUE(same_bits(lo[m], *vlo) && same_bits(run_lo[m], *vlo)) << "member " << m;
    EXPECT_TRUE(same_bits(hi[m], *vhi) && same_bits(run_hi[m], *vhi)) << "member " << m;
    EXPECT_EQ(lo_at[m], vlo - v.begin());
    EXPECT_EQ(run_lo_at[m], vlo - v.begin());
    EXPECT_EQ(hi_at[m], vhi - v.begin());
    EXPECT_EQ(run_hi_at[m], vhi - v.begin());
  }
}

// Exact by design (extremes.hpp): a NaN never replaces an extreme, so a member with NaN
// samples keeps the extremes of its other samples, and one with only NaN keeps index -1.
TEST(Extremes, NaNSamplesAreNeverTaken) {
  const std::vector<std::vector<double>> members = {{kNaN, 2.0, kNaN, -1.0, kNaN},
                                                    {kNaN, kNaN, kNaN, kNaN, kNaN}};
  const stats::Extremes e = accumulate(members);
  EXPECT_EQ(e.min(0, 0), -1.0);
  EXPECT_EQ(e.min_at(0, 0), 3);
  EXPECT_EQ(e.max(0, 0), 2.0);
  EXPECT_EQ(e.max_at(0, 0), 1);
  EXPECT_EQ(e.min_at(0, 1), -1);
  EXPECT_EQ(e.max_at(0, 1), -1);
}

// Exact by design: a state saved after part of a series and loaded into a fresh accumulator
// continues to the same extremes and indices; states of another shape or with an index
// outside the samples taken are refused.
TEST(Extremes, SaveAndLoadContinueBitwise) {
  std::mt19937_64 gen(15);
  std::vector<std::vector<double>> members;
  for (int m = 0; m < 3; ++m) members.push_back(tied_series(gen, 90));
  const stats::Extremes whole = accumulate(members);
  stats::Extremes part(1, 3);
  std::vector<double> column(3);
  const double* columns[] = {column.data()};
  auto add = [&](stats::Extremes& e, int k) {
    for (int m = 0; m < 3; ++m) column[m] = members[m][k];
    e.add(columns);
  };
  for (int k = 0; k < 40; ++k) add(part, k);
  stats::SavedState saved;
  part.save("x.", saved);
  stats::Extremes resumed(1, 3);
  stats::SavedStateReader in(saved.reals, saved.integers);
  resumed.load("x.", in);
  in.finish();
  for (int k = 40; k < 90; ++k) add(resumed, k);
  for (int m = 0; m < 3; ++m) {
    EXPECT_TRUE(same_bits(resumed.min(0, m), whole.min(0, m)));
    EXPECT_TRUE(same_bits(resumed.max(0, m), whole.max(0, m)));
    EXPECT_EQ(resumed.min_at(0, m), whole.min_at(0, m));
    EXPECT_EQ(resumed.max_at(0, m), whole.max_at(0, m));
  }
  stats::Extremes wider(1, 4);
  stats::SavedStateReader wrong_shape(saved.reals, saved.integers);
  EXPECT_THROW(wider.load("x.", wrong_shape), Error);
  stats::SavedState late = saved;
  for (auto& a : late.integers) {
    if (a.first == "x.min_at") a.second[0] = 40;  // sample 40 has not been taken yet
  }
  stats::SavedStateReader late_in(late.reals, late.integers);
  EXPECT_THROW(stats::Extremes(1, 3).load("x.", late_in), Error);
}

// ---- a batch's extremes against a scalar re-integration of each member ----------------------

/// Classical RK4 for one member with a scheduled parameter (slot) set before each stage's
/// right-hand side: at t0 = n dt for k1, t0 + dt/2 for k2 and k3, t1 = (n + 1) dt for k4
/// (the scheduled integration's contract, run/schedule.hpp); without schedule (slot < 0) the
/// same steps as integrators::Rk4Reference.
class ScalarRk4 {
 public:
  ScalarRk4(models::Model& model, const spec::Spec& spec)
      : model_(model), d_(model.state_dim()), k1_(d_), k2_(d_), k3_(d_), k4_(d_), s_(d_) {
    if (spec.schedule.kind != spec::ScheduleKind::none) {
      slot_ = model.parameter_slot(spec.schedule.parameter);
      schedule_ = std::make_unique<run::ParameterSchedule>(spec.schedule, 0.0);
    }
  }
  void step(double* x, double dt, std::int64_t n) {
    const double t0 = static_cast<double>(n) * dt, t1 = static_cast<double>(n + 1) * dt;
    const double half = 0.5 * dt, sixth = dt / 6.0;
    set(t0);
    model_.rhs(x, k1_.data(), 1);
    for (int i = 0; i < d_; ++i) s_[i] = x[i] + half * k1_[i];
    set(t0 + half);
    model_.rhs(s_.data(), k2_.data(), 1);
    for (int i = 0; i < d_; ++i) s_[i] = x[i] + half * k2_[i];
    model_.rhs(s_.data(), k3_.data(), 1);
    for (int i = 0; i < d_; ++i) s_[i] = x[i] + dt * k3_[i];
    set(t1);
    model_.rhs(s_.data(), k4_.data(), 1);
    for (int i = 0; i < d_; ++i) {
      x[i] += sixth * (k1_[i] + 2.0 * k2_[i] + 2.0 * k3_[i] + k4_[i]);
    }
  }

 private:
  void set(double t) {
    if (slot_ >= 0) model_.set_parameter(slot_, schedule_->at(t));
  }
  models::Model& model_;
  int d_;
  std::vector<double> k1_, k2_, k3_, k4_, s_;
  int slot_ = -1;
  std::unique_ptr<run::ParameterSchedule> schedule_;
};

/// The kernel a runner picks for campaign `s` (the choice's inputs resolved as the runner
/// resolves them).
run::KernelKind kernel_of(const spec::Spec& s, const plan::Plan& plan,
                          const models::Model& model) {
  run::Setup setup;
  setup.model = s.model;
  setup.model_info = plan.model;
  setup.width = plan.batch_size;
  setup.state_dim = model.state_dim();
  setup.observables = plan.observable_index;
  setup.regime_kind = s.statistics.regimes.kind;
  setup.n_regimes = static_cast<int>(plan.regime_labels.size());
  for (std::size_t i = 0; i < model.observables().size(); ++i) {
    const std::string& name = model.observables()[i].name;
    if (name == s.statistics.regimes.observable) setup.regime_coordinates = {static_cast<int>(i)};
    if (name == s.statistics.histogram.observable) setup.histogram_observable = static_cast<int>(i);
  }
  if (s.statistics.histogram.enabled) setup.histogram = s.statistics.histogram;
  if (s.schedule.kind != spec::ScheduleKind::none) setup.schedule = s.schedule;
  return run::choose_kernel(setup);
}

/// Every member of every batch of case 0: its accumulated samples re-integrated alone from
/// its initial state (steps spinup + 1 .. total, one sample after each), then
/// std::min_element / std::max_element over each observable's samples. The time of the sample
/// after step k is k * dt, the formula of /snapshot/time (parallel/snapshot_reduce.cpp).
void expect_extremes_of_reintegration(const spec::Spec& s, run::KernelKind expected) {
  const plan::Plan plan = plan::make_plan(s);
  const run::CaseRunner runner(s, plan, plan.cases[0]);
  const auto model = model_info(s.model).make(run::parameters_at_start(s, plan.cases[0]));
  const auto& all = model->observables();
  const int d = model->state_dim(), n_obs = static_cast<int>(plan.observable_index.size());
  std::vector<double> derived(all.size() - static_cast<std::size_t>(d));
  const double dt = s.integration.dt;
  ASSERT_EQ(kernel_of(s, plan, *model), expected);
  int checked = 0;
  for (std::int64_t index = 0; index < plan.batches_per_case(); ++index) {  // case 0's batches
    const plan::Batch b = plan.batch(index);
    const run::BatchResult r = runner.run(b);
    ASSERT_EQ(r.extreme_min.size(), static_cast<std::size_t>(r.count) * n_obs);
    for (int j = 0; j < r.count; ++j) {
      SCOPED_TRACE("member " + std::to_string(b.first_member + j));
      ASSERT_EQ(r.status[j], run::kValid);
      std::vector<double> x(r.initial_state.begin() + j * d, r.initial_state.begin() + (j + 1) * d);
      ScalarRk4 rk4(*model, s);
      std::vector<std::vector<double>> samples(static_cast<std::size_t>(n_obs));
      for (std::int64_t step = 1; step <= plan.total_steps(); ++step) {
        rk4.step(x.data(), dt, step - 1);
        if (step <= plan.spinup_steps) continue;
        if (derived.size() > 0) model->derived(x.data(), derived.data(), 1);
        for (int o = 0; o < n_obs; ++o) {
          const int i = plan.observable_index[o];
          samples[o].push_back(i < d ? x[i] : derived[i - d]);
        }
      }
      for (int o = 0; o < n_obs; ++o) {
        const std::vector<double>& v = samples[o];
        ASSERT_EQ(static_cast<std::int64_t>(v.size()), plan.accumulate_steps);
        const auto lo = std::min_element(v.begin(), v.end());
        const auto hi = std::max_element(v.begin(), v.end());
        const std::int64_t lo_step = plan.spinup_steps + 1 + (lo - v.begin());
        const std::int64_t hi_step = plan.spinup_steps + 1 + (hi - v.begin());
        const std::size_t at = static_cast<std::size_t>(j) * n_obs + o;
        EXPECT_TRUE(same_bits(r.extreme_min[at], *lo)) << all[plan.observable_index[o]].name;
        EXPECT_TRUE(same_bits(r.extreme_max[at], *hi)) << all[plan.observable_index[o]].name;
        EXPECT_TRUE(same_bits(r.extreme_min_time[at], static_cast<double>(lo_step) * dt));
        EXPECT_TRUE(same_bits(r.extreme_max_time[at], static_cast<double>(hi_step) * dt));
      }
      ++checked;
    }
  }
  EXPECT_EQ(checked, s.ensemble.members);
}

// Outside check: the scalar re-integration and std::min_element / std::max_element. Forced
// Lorenz-63 on the fused kernel, observables (z, x), 20 members in batches of 8 (the last one
// padded), spin-up 0.6 and 2.0 time units accumulated at dt 0.005.
TEST(ExtremesOfABatch, Lorenz63FusedEqualsScalarReintegration) {
  spec::Spec s = small_lorenz63_spec("extremes-l63");
  s.ensemble.members = 20;
  s.ensemble.perturbation = {spec::Distribution::gaussian, 0.5};
  s.integration.spinup = 0.6;
  s.integration.duration = 2.0;
  s.statistics.observables = {"z", "x"};
  expect_extremes_of_reintegration(s, run::KernelKind::fused);
}

// Outside check as above: Lorenz-96 (n 12) on the ring kernel with a few sites and the
// derived site_mean and energy (the model's derived() at width 1 in the re-integration).
TEST(ExtremesOfABatch, Lorenz96RingEqualsScalarReintegration) {
  spec::Spec s = small_lorenz63_spec("extremes-l96");
  s.model = "lorenz96";
  s.parameters = models::complete_parameters(model_info("lorenz96"), {{"n", {12.0}}});
  s.ensemble.perturbation = {spec::Distribution::gaussian, 0.5};
  s.integration.dt = 0.01;
  s.integration.spinup = 0.5;
  s.integration.duration = 3.0;
  s.statistics.observables = {"x3", "site_mean", "x0", "energy"};
  s.statistics.regimes.observable = "x0";
  s.statistics.histogram = {true, "x0", 10, -10.0, 15.0};
  expect_extremes_of_reintegration(s, run::KernelKind::ring);
}

// Outside check as above: Lorenz-84 on its fused kernel, without and with a periodic schedule
// of F (set at every RK4 stage time), spin-up 1.0 and 6.0 accumulated.
TEST(ExtremesOfABatch, Lorenz84AndScheduledEqualScalarReintegration) {
  spec::Spec s = small_lorenz63_spec("extremes-l84");
  s.model = "lorenz84";
  s.parameters = models::complete_parameters(model_info("lorenz84"), {});
  s.ensemble.perturbation = {spec::Distribution::gaussian, 0.1};
  s.integration.dt = 0.01;
  s.integration.spinup = 1.0;
  s.integration.duration = 6.0;
  s.statistics.observables = {};
  s.statistics.regimes.observable = "y";
  s.statistics.histogram = {true, "x", 10, -2.0, 3.0};
  expect_extremes_of_reintegration(s, run::KernelKind::fused);
  s.schedule.kind = spec::ScheduleKind::periodic;
  s.schedule.parameter = "F";
  s.schedule.mean = 8.0;
  s.schedule.amplitude = 1.5;
  s.schedule.period = 2.3;
  s.schedule.phase = 0.3;
  expect_extremes_of_reintegration(s, run::KernelKind::fused);
}

// Exact by design (batch_runner.hpp): a member flagged non-finite reports NaN for its
// extremes and their times, while a valid one reports a sample of its accumulation window.
TEST(ExtremesOfABatch, NonFiniteMembersGiveNaN) {
  spec::Spec s = blown_up(small_lorenz63_spec("extremes-blow-up"));
  const plan::Plan plan = plan::make_plan(s);
  const run::CaseRunner runner(s, plan, plan.cases[0]);
  int flagged = 0, valid = 0;
  for (std::int64_t index = 0; index < plan.batch_count(); ++index) {
    const run::BatchResult r = runner.run(plan.batch(index));
    const std::size_t n = plan.observable_index.size();
    for (int j = 0; j < r.count; ++j) {
      for (std::size_t o = 0; o < n; ++o) {
        const std::size_t at = static_cast<std::size_t>(j) * n + o;
        const double t_lo = r.extreme_min_time[at], t_hi = r.extreme_max_time[at];
        if (r.status[j] == run::kNonFinite) {
          EXPECT_TRUE(std::isnan(r.extreme_min[at]) && std::isnan(r.extreme_max[at]));
          EXPECT_TRUE(std::isnan(t_lo) && std::isnan(t_hi));
        } else {
          EXPECT_LE(r.extreme_min[at], r.extreme_max[at]);
          for (double t : {t_lo, t_hi}) {
            EXPECT_GT(t, static_cast<double>(plan.spinup_steps) * s.integration.dt);
            EXPECT_LE(t, static_cast<double>(plan.total_steps()) * s.integration.dt);
          }
        }
      }
      (r.status[j] == run::kNonFinite ? flagged : valid) += 1;
    }
  }
  EXPECT_GE(flagged, 1);
  EXPECT_GE(valid, 1);
}

}  // namespace
}  // namespace chaosweep::testing
