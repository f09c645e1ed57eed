// Fixed-order reduction of the batches' snapshot statistics (see reduce.hpp).
//
// Each batch carries, per snapshot time k and observable o, the moments (n, mean, m2) across
// its valid members, and per regime the number of its valid members in it. They are gathered
// in batch order and merged per case in plan order with Chan's pairwise update, so the result
// is bitwise the same for any number of ranks:
//   mean = merged mean,  variance = m2 / (n - 1),  regime fraction = count / valid members.
#include <cmath>

#include "parallel/reduce.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::parallel {

void reduce_snapshots(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                      const std::vector<run::BatchResult>& local, EnsembleResults& r) {
  const std::size_t times = static_cast<std::size_t>(plan.snapshot_count);
  if (times == 0) return;
  const std::size_t n_obs = plan.observables.size(), n_reg = plan.regime_labels.size();
  const std::size_t n_cases = plan.cases.size();
  std::vector<double> local_moments;
  std::vector<std::int64_t> local_counts;
  for (const run::BatchResult& b : local) {
    local_moments.insert(local_moments.end(), b.snapshot_moments.begin(), b.snapshot_moments.end());
    local_counts.insert(local_counts.end(), b.snapshot_regimes.begin(), b.snapshot_regimes.end());
  }
  const std::vector<double> moments = comm.allgather_in_rank_order(local_moments);
  const std::vector<std::int64_t> counts = comm.allgather_in_rank_order(local_counts);

  const std::size_t per_batch = times * n_obs * 3, per_batch_counts = times * n_reg;
  std::vector<stats::Moments> merged(n_cases * times * n_obs);
  std::vector<std::int64_t> members(n_cases * times * n_reg, 0);
  for (std::int64_t index = 0; index < plan.batch_count(); ++index) {
    const plan::Batch b = plan.batch(index);
    const std::size_t c = static_cast<std::size_t>(b.case_index);
    const double* p = moments.data() + static_cast<std::size_t>(b.index) * per_batch;
    for (std::size_t i = 0; i < times * n_obs; ++i, p += 3) {
      merged[c * times * n_obs + i].merge(stats::Moments::unpack(p));
    }
    const std::int64_t* q = counts.data() + static_cast<std::size_t>(b.index) * per_batch_counts;
    for (std::size_t i = 0; i < per_batch_counts; ++i) members[c * per_batch_counts + i] += q[i];
  }

  r.snapshot_time.resize(times);
  for (std::size_t k = 0; k < times; ++k) {
    const std::int64_t step = plan.spinup_steps + static_cast<std::int64_t>(k) * plan.snapshot_every_steps;
    r.snapshot_time[k] = static_cast<double>(step) * spec.integration.dt;
  }
  r.snapshot_mean.assign(merged.size(), NAN);
  r.snapshot_variance.assign(merged.size(), NAN);
  for (std::size_t i = 0; i < merged.size(); ++i) {
    if (merged[i].n > 0.0) r.snapshot_mean[i] = merged[i].mean;
    r.snapshot_variance[i] = merged[i].variance();
  }
  r.snapshot_regime_fraction.assign(members.size(), NAN);
  for (std::size_t ck = 0; ck < n_cases * times; ++ck) {
    std::int64_t valid = 0;
    for (std::size_t k = 0; k < n_reg; ++k) valid += members[ck * n_reg + k];
    if (valid == 0) continue;
    for (std::size_t k = 0; k < n_reg; ++k) {
      r.snapshot_regime_fraction[ck * n_reg + k] =
          static_cast<double>(members[ck * n_reg + k]) / static_cast<double>(valid);
    }
  }
}

}  // namespace chaosweep::parallel
