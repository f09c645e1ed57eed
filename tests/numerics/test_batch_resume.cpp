// Resumable batches: advancing in chunks, saving and resuming give bitwise the result of one
// uninterrupted run; a saved state that does not fit the batch is refused.
#include <gtest/gtest.h>

#include <cstdint>
#include <memory>
#include <random>
#include <string>
#include <type_traits>
#include <vector>

#include "core/error.hpp"
#include "numerics_fixtures.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"

namespace chaosweep::testing {
namespace {

/// Forced Lorenz-63, 8-member batches, sign regimes, histogram, trajectories. Spin-up 1.234
/// (247 steps) and duration 3.001 (601 steps) are not multiples of the 32-step finiteness
/// check nor of the 256-sample moment blocks, so chunk ends fall everywhere.
spec::Spec l63_spec() {
  spec::Spec s = small_lorenz63_spec("resume-test");
  s.ensemble.initial.spinup = 5.0;
  s.ensemble.seed = 77;
  s.integration.spinup = 1.235;
  s.integration.duration = 3.005;
  s.output.trajectories = {8, 0.25};
  return s;
}

/// Members started far off the attractor at a large step (some overflow and are flagged
/// during the run), so the saved non-finite flags matter.
spec::Spec blow_up_spec() {
  spec::Spec s = blown_up(l63_spec());
  return s;
}

/// Lorenz-96 (n 12) with its derived observables and nearest regimes on two sites.
spec::Spec l96_spec() {
  spec::Spec s = l63_spec();
  s.model = "lorenz96";
  s.parameters = models::complete_parameters(model_info("lorenz96"), {{"n", {12.0}}});
  s.statistics.regimes = spec::Regimes{};
  s.statistics.regimes.kind = spec::RegimeKind::nearest;
  s.statistics.regimes.coordinates = {"x0", "energy"};
  s.statistics.regimes.centroids = {{2.0, 100.0}, {-1.0, 150.0}};
  s.statistics.regimes.labels = {"a", "b"};
  s.statistics.histogram = {true, "site_mean", 10, -5.0, 10.0};
  return s;
}

/// The same campaign with twins sampled every 7 steps (not a divisor of 32 or of the moment
/// blocks, and the 601 accumulation steps end between two leads).
spec::Spec with_twins(spec::Spec s) {
  s.statistics.twins = {true, 1e-6, 7 * s.integration.dt, 0.5};
  return s;
}

/// Lorenz-96 (n 12) with a periodic forcing (the generic kernel, parameter set at every RK4
/// stage) and snapshots every 0.25 from the end of the spin-up, with regimes.
spec::Spec scheduled_spec() {
  spec::Spec s = l96_spec();
  s.schedule.kind = spec::ScheduleKind::periodic;
  s.schedule.parameter = "F";
  s.schedule.mean = 8.0;
  s.schedule.amplitude = 2.0;
  s.schedule.period = 1.3;
  s.schedule.phase = 0.4;
  s.statistics.snapshots = {true, 0.25};
  return s;
}

struct Campaign {
  spec::Spec spec;
  plan::Plan plan;
  explicit Campaign(spec::Spec s) : spec(std::move(s)), plan(plan::make_plan(spec)) {}
  run::CaseRunner runner() const { return run::CaseRunner(spec, plan, plan.cases[0]); }
};

plan::Batch batch(std::int64_t first, int count) {
  plan::Batch b;
  b.index = 3;
  b.case_index = 0;
  b.first_member = first;
  b.count = count;
  return b;
}

template <typename T>
void expect_same(const std::vector<T>& a, const std::vector<T>& b, const char* what) {
  ASSERT_EQ(a.size(), b.size()) << what;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if constexpr (std::is_floating_point_v<T>) {
      ASSERT_TRUE(same_bits(a[i], b[i])) << what << "[" << i << "]: " << a[i] << " vs " << b[i];
    } else {
      ASSERT_EQ(a[i], b[i]) << what << "[" << i << "]";
    }
  }
}

/// Every field of two results, bitwise.
void expect_same_result(const run::BatchResult& a, const run::BatchResult& b) {
  EXPECT_EQ(a.batch_index, b.batch_index);
  EXPECT_EQ(a.case_index, b.case_index);
  EXPECT_EQ(a.first_member, b.first_member);
  EXPECT_EQ(a.count, b.count);
  EXPECT_EQ(a.trajectory_members, b.trajectory_members);
  expect_same(a.initial_state, b.initial_state, "initial_state");
  expect_same(a.status, b.status, "status");
  expect_same(a.time_mean, b.time_mean, "time_mean");
  expect_same(a.time_variance, b.time_variance, "time_variance");
  expect_same(a.time_mean_stderr, b.time_mean_stderr, "time_mean_stderr");
  expect_same(a.time_mean_tau, b.time_mean_tau, "time_mean_tau");
  expect_same(a.time_mean_samples, b.time_mean_samples, "time_mean_samples");
  expect_same(a.extreme_min, b.extreme_min, "extreme_min");
  expect_same(a.extreme_max, b.extreme_max, "extreme_max");
  expect_same(a.extreme_min_time, b.extreme_min_time, "extreme_min_time");
  expect_same(a.extreme_max_time, b.extreme_max_time, "extreme_max_time");
  expect_same(a.regime_fraction, b.regime_fraction, "regime_fraction");
  expect_same(a.regime_mean_residence, b.regime_mean_residence, "regime_mean_residence");
  expect_same(a.regime_transitions, b.regime_transitions, "regime_transitions");
  expect_same(a.histogram, b.histogram, "histogram");
  expect_same(a.trajectory, b.trajectory, "trajectory");
  expect_same(a.twin_moments, b.twin_moments, "twin_moments");
  expect_same(a.spread, b.spread, "spread");
  expect_same(a.horizon, b.horizon, "horizon");
  expect_same(a.snapshot_moments, b.snapshot_moments, "snapshot_moments");
  expect_same(a.snapshot_regimes, b.snapshot_regimes, "snapshot_regimes");
  expect_same(a.response_sums, b.response_sums, "response_sums");
}

/// The response sums every 3 steps with lags to 12 steps (the ring kernel records them inside
/// its runs of steps; the chunks end anywhere between them).
spec::Spec with_response(spec::Spec s) {
  s.statistics.response = {true, 12 * s.integration.dt, 3 * s.integration.dt, 4};
  return s;
}

/// Lorenz-96 (n 12) with sign regimes on x0: the ring kernel.
spec::Spec ring_spec() {
  spec::Spec s = l96_spec();
  s.statistics.regimes = spec::Regimes{};
  s.statistics.regimes.kind = spec::RegimeKind::sign;
  s.statistics.regimes.observable = "x0";
  s.statistics.regimes.labels = {"positive", "negative"};
  return s;
}

std::vector<spec::Spec> all_specs() {
  return {l63_spec(), blow_up_spec(), l96_spec(), with_twins(l63_spec()),
          with_twins(blow_up_spec()), with_twins(l96_spec()), scheduled_spec(),
          with_response(l63_spec()), with_response(ring_spec()),
          with_response(blow_up_spec())};
}

// Exact by design (batch_runner.hpp: chunking cannot change anything, since every periodic
// event is keyed to the absolute step number): random chunk sizes from 1 to 300 steps, with a
// few zero-step calls, give bitwise the result of run().
TEST(BatchResume, ChunkedAdvanceEqualsOneGo) {
  std::mt19937_64 gen(5);
  for (const spec::Spec& s : all_specs()) {
    SCOPED_TRACE(s.model + (s.statistics.twins.enabled ? " with twins" : ""));
    const Campaign c(s);
    const run::CaseRunner runner = c.runner();
    for (const plan::Batch& b : {batch(0, 8), batch(8, 5)}) {
      const run::BatchResult whole = runner.run(b);
      for (int trial = 0; trial < 3; ++trial) {
        const auto progress = runner.start(b);
        EXPECT_EQ(progress->total_steps(), c.plan.total_steps());
        std::int64_t calls = 0;
        while (!progress->done()) {
          const std::int64_t before = progress->step();
          const std::int64_t chunk =
              calls++ % 7 == 3 ? 0 : 1 + static_cast<std::int64_t>(gen() % 300);
          progress->advance(chunk);
          EXPECT_EQ(progress->step(), std::min(before + chunk, c.plan.total_steps()));
        }
        expect_same_result(whole, progress->finish());
      }
    }
  }
}

// Exact by design: a state saved at step 0, in the spin-up, in the accumulation (inside a
// moment block and after a finiteness check) and at the end, resumed by a freshly built
// CaseRunner (another "process") and finished, gives bitwise the uninterrupted result.
TEST(BatchResume, SaveAndResumeInAFreshRunnerEqualsOneGo) {
  for (const spec::Spec& s : all_specs()) {
    SCOPED_TRACE(s.model + (s.statistics.twins.enabled ? " with twins" : ""));
    const Campaign c(s);
    const std::int64_t total = c.plan.total_steps(), spin = c.plan.spinup_steps;
    ASSERT_GT(spin, 100);
    const run::BatchResult whole = c.runner().run(batch(0, 8));
    int flagged = 0;
    for (std::uint8_t st : whole.status) flagged += st == run::kNonFinite;
    if (s.integration.dt == 0.01) {
      ASSERT_GE(flagged, 1) << "the blow-up campaign needs a flagged member";
      ASSERT_LE(flagged, 7) << "and a valid one";
    }
    for (std::int64_t at : {std::int64_t{0}, spin / 2, spin + 300, total - 1, total}) {
      SCOPED_TRACE("saved at step " + std::to_string(at));
      run::BatchState state;
      {
        const run::CaseRunner first = c.runner();
        const auto progress = first.start(batch(0, 8));
        progress->advance(at);
        state = progress->save();
        EXPECT_EQ(state.step, at);
        EXPECT_EQ(state.batch_index, 3);
      }
      const run::CaseRunner second = c.runner();
      const auto resumed = second.resume(batch(0, 8), state);
      EXPECT_EQ(resumed->step(), at);
      resumed->advance(total);
      expect_same_result(whole, resumed->finish());
    }
  }
}

/// The state of batch(0, 8) of the Lorenz-63 campaign saved in the accumulation phase.
run::BatchState saved_state(const run::CaseRunner& runner, const Campaign& c) {
  const auto progress = runner.start(batch(0, 8));
  progress->advance(c.plan.spinup_steps + 10);
  return progress->save();
}

// Exact by design (batch_runner.hpp): a state with a renamed, missing, resized or extra array,
// another batch's index or a step outside the run is refused with chaosweep::Error.
TEST(BatchResume, StatesThatDoNotFitAreRefused) {
  const Campaign c(l63_spec());
  const run::CaseRunner runner = c.runner();
  const run::BatchState good = saved_state(runner, c);
  ASSERT_FALSE(good.reals.empty());
  ASSERT_FALSE(good.integers.empty());
  EXPECT_NO_THROW(runner.resume(batch(0, 8), good));
  std::vector<run::BatchState> bad;
  for (std::size_t i = 0; i < good.reals.size(); ++i) {
    run::BatchState renamed = good, resized = good, missing = good;
    renamed.reals[i].first += "_";
    resized.reals[i].second.push_back(0.0);
    missing.reals.erase(missing.reals.begin() + static_cast<long>(i));
    bad.insert(bad.end(), {renamed, resized, missing});
  }
  for (std::size_t i = 0; i < good.integers.size(); ++i) {
    run::BatchState renamed = good, resized = good;
    renamed.integers[i].first = "other";
    resized.integers[i].second.pop_back();
    bad.insert(bad.end(), {renamed, resized});
  }
  run::BatchState extra = good, duplicate = good, other_batch = good, late = good, early = good;
  extra.reals.push_back({"lyapunov", {1.0}});
  duplicate.integers.push_back(good.integers.front());
  other_batch.batch_index += 1;
  late.step = c.plan.total_steps() + 1;
  early.step = -1;
  bad.insert(bad.end(), {extra, duplicate, other_batch, late, early});
  for (std::size_t k = 0; k < bad.size(); ++k) {
    SCOPED_TRACE("variant " + std::to_string(k));
    EXPECT_THROW(runner.resume(batch(0, 8), bad[k]), Error);
  }
  // a state of a 5-member batch does not fit an 8-member one (initial states differ in size)
  const auto five = runner.start(batch(0, 5));
  EXPECT_THROW(runner.resume(batch(0, 8), five->save()), Error);
}

// Exact by design: finish() only when done, once; advance() after the end does nothing.
TEST(BatchResume, FinishOnlyWhenDone) {
  const Campaign c(l63_spec());
  const run::CaseRunner runner = c.runner();
  const auto progress = runner.start(batch(0, 8));
  EXPECT_THROW(progress->finish(), Error);
  progress->advance(c.plan.total_steps() + 50);
  EXPECT_TRUE(progress->done());
  progress->advance(10);
  EXPECT_EQ(progress->step(), c.plan.total_steps());
  EXPECT_NO_THROW(progress->finish());
  EXPECT_THROW(progress->finish(), Error);
}

}  // namespace
}  // namespace chaosweep::testing
