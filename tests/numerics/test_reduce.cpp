// The reduction of per-batch results into ensemble estimates (parallel/reduce.hpp), called with
// the communicator's serial form: no MPI, the merge as a pure function of the batch results.
// The MPI tests (tests/e2e) check the same reduction at 1-4 ranks, bitwise.
#include <gtest/gtest.h>

#include <cmath>
#include <stdexcept>
#include <vector>

#include "numerics_fixtures.hpp"
#include "parallel/batch_summary.hpp"
#include "parallel/communicator.hpp"
#include "parallel/reduce.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"

namespace chaosweep::testing {
namespace {

struct Campaign {
  spec::Spec spec;
  plan::Plan plan;
  std::vector<run::BatchResult> batches;  // every batch, in batch order
};

/// The small forced loop swept over two forcings, 16 members in batches of 8, run batch by
/// batch on this process.
Campaign small_campaign() {
  Campaign c{small_lorenz63_spec("reduce"), {}, {}};
  c.spec.sweep.push_back({"forcing", {0.0, 3.0}, {}});
  c.plan = plan::make_plan(c.spec);
  for (const plan::Case& k : c.plan.cases) {
    const run::CaseRunner runner(c.spec, c.plan, k);
    for (std::int64_t index = 0; index < c.plan.batch_count(); ++index) {
      const plan::Batch b = c.plan.batch(index);
      if (b.case_index == k.index) c.batches.push_back(runner.run(b));
    }
  }
  return c;
}

// Published: merging partial moments with Chan, Golub & LeVeque's (1983) pairwise update gives
// the two-pass mean and variance to rounding (1e-12 relative); the ensemble estimate of each
// case is therefore the two-pass mean and standard deviation of its valid members' time
// means, whatever the batches. Exact: the histogram counts every accumulated sample of every
// valid member once (the range, |x| < 30, holds the loop's x, from memory |x| < 25), regime
// fractions of a sign regime sum to 1, and the 95% interval is mean +- t se with the
// published t quantile t(0.975, 15) = 2.131449546 (Student t tables) and se the archived
// standard error (1e-9: the table's digits).
TEST(Reduce, SerialMergeEqualsTwoPassEstimates) {
  const Campaign c = small_campaign();
  const parallel::EnsembleResults r =
      parallel::reduce(parallel::Communicator::serial(), c.spec, c.plan, c.batches);
  const std::size_t n_obs = c.plan.observables.size();
  ASSERT_EQ(r.valid_members.size(), 2u);
  for (std::size_t k = 0; k < 2; ++k) {
    for (std::size_t o = 0; o < n_obs; ++o) {
      std::vector<double> values;
      for (const run::BatchResult& b : c.batches) {
        if (b.case_index != static_cast<std::int64_t>(k)) continue;
        for (int i = 0; i < b.count; ++i) {
          if (b.status[i] == run::kValid) values.push_back(b.time_mean[i * n_obs + o]);
        }
      }
      double mean = 0.0, m2 = 0.0;
      for (double v : values) mean += v;
      mean /= static_cast<double>(values.size());
      for (double v : values) m2 += (v - mean) * (v - mean);
      const double sd = std::sqrt(m2 / static_cast<double>(values.size() - 1));
      const std::size_t i = k * n_obs + o;
      EXPECT_EQ(r.valid_members[k], static_cast<std::int64_t>(values.size()));
      EXPECT_NEAR(r.time_mean[i], mean, 1e-12 * std::abs(mean) + 1e-14);
      EXPECT_NEAR(r.time_mean_std[i], sd, 1e-12 * sd);
      EXPECT_GE(r.time_mean_stderr[i], sd / std::sqrt(16.0) * (1 - 1e-12));
      ASSERT_EQ(values.size(), 16u);
      const double half = 2.131449546 * r.time_mean_stderr[i];
      EXPECT_NEAR(r.time_mean_ci95[2 * i], mean - half, 1e-9 * half + 1e-12 * std::abs(mean));
      EXPECT_NEAR(r.time_mean_ci95[2 * i + 1], mean + half, 1e-9 * half + 1e-12 * std::abs(mean));
    }
    std::int64_t counted = 0;
    for (int bin = 0; bin < c.spec.statistics.histogram.bins; ++bin) {
      counted += r.histogram[k * c.spec.statistics.histogram.bins + bin];
    }
    EXPECT_EQ(counted, r.valid_members[k] * c.plan.accumulate_steps);
    EXPECT_NEAR(r.regime_fraction[2 * k] + r.regime_fraction[2 * k + 1], 1.0, 1e-12);
    EXPECT_EQ(r.non_chaotic[k], 0) << r.non_chaotic_reason[k];
  }
}

// Exact by design: the reduction depends only on the batch results and merges them in batch
// order, so two calls on the same results give the same bits; the serial communicator is
// rank 0 of 1.
TEST(Reduce, SerialMergeIsAPureFunction) {
  const Campaign c = small_campaign();
  const parallel::Communicator serial = parallel::Communicator::serial();
  EXPECT_EQ(serial.rank(), 0);
  EXPECT_EQ(serial.size(), 1);
  const parallel::EnsembleResults a = parallel::reduce(serial, c.spec, c.plan, c.batches);
  const parallel::EnsembleResults b = parallel::reduce(serial, c.spec, c.plan, c.batches);
  EXPECT_TRUE(bitwise_equal(a.time_mean, b.time_mean));
  EXPECT_TRUE(bitwise_equal(a.time_mean_ci95, b.time_mean_ci95));
  EXPECT_TRUE(bitwise_equal(a.slope, b.slope));
  EXPECT_TRUE(bitwise_equal(a.histogram, b.histogram));
}

// Exact by design: a rank folds its batches into the merge tree in batch order whatever the
// order they finish or are restored in (a batch that comes early waits for those before it),
// and a batch summarised and trimmed to the archived rows reduces like the whole batch; the
// estimates are the same bits as from every batch's full results in order.
TEST(Reduce, BatchesFoldedInAnyOrderGiveTheSameBits) {
  Campaign c = small_campaign();
  const parallel::Communicator serial = parallel::Communicator::serial();
  const parallel::EnsembleResults in_order = parallel::reduce(serial, c.spec, c.plan, c.batches);
  c.plan.archived_members = 3;  // as with output.members {sample: 3}
  std::vector<run::BatchResult> trimmed = c.batches;
  for (run::BatchResult& b : trimmed) {
    parallel::summarise(c.spec, c.plan, b);
    parallel::keep_archived_rows(c.plan, b);
  }
  EXPECT_EQ(trimmed[0].status.size(), 3u);
  EXPECT_TRUE(trimmed[1].status.empty());
  for (const std::vector<std::size_t>& order :
       std::vector<std::vector<std::size_t>>{{3, 2, 1, 0}, {1, 3, 0, 2}, {2, 0, 3, 1}}) {
    parallel::LocalPartial mine(c.spec, c.plan, 0);
    for (std::size_t i : order) mine.add(trimmed[i]);
    EXPECT_EQ(mine.waiting(), 0u);
    const parallel::EnsembleResults r = parallel::reduce(serial, c.spec, c.plan, mine);
    EXPECT_TRUE(bitwise_equal(r.time_mean, in_order.time_mean));
    EXPECT_TRUE(bitwise_equal(r.time_mean_std, in_order.time_mean_std));
    EXPECT_TRUE(bitwise_equal(r.time_mean_stderr, in_order.time_mean_stderr));
    EXPECT_TRUE(bitwise_equal(r.regime_fraction, in_order.regime_fraction));
    EXPECT_TRUE(bitwise_equal(r.histogram, in_order.histogram));
    EXPECT_EQ(r.valid_members, in_order.valid_members);
  }
  // A batch missing before others: the reduction refuses rather than merge out of order.
  parallel::LocalPartial gap(c.spec, c.plan, 0);
  gap.add(trimmed[1]);
  EXPECT_EQ(gap.waiting(), 1u);
  EXPECT_THROW(parallel::reduce(serial, c.spec, c.plan, gap), std::logic_error);
}

}  // namespace
}  // namespace chaosweep::testing
