// Fixed-order reduction of the batches' snapshot statistics (see reduce.hpp).
//
// Each batch carries, per snapshot time k and observable o, the moments (n, mean, m2) across
// its valid members, and per regime the number of its valid members in it. The moments are
// merged per case with Chan's pairwise update along the fixed merge tree
// (parallel/merge_batches.hpp), the counts summed, so the result is bitwise the same for any
// number of ranks:
//   mean = merged mean,  variance = m2 / (n - 1),  regime fraction = count / valid members.
#include <cmath>

#include "parallel/batch_summary.hpp"
#include "parallel/merge_batches.hpp"
#include "parallel/reduce.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::parallel {

void reduce_snapshots(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                      const LocalSummaries& mine, EnsembleResults& r) {
  const std::size_t times = static_cast<std::size_t>(plan.snapshot_count);
  if (times == 0) return;
  const std::size_t n_obs = plan.observables.size(), n_reg = plan.regime_labels.size();
  const std::size_t n_cases = plan.cases.size();
  const std::vector<double> moments = merge_batches(
      comm, merge_shape(plan), mine.parts.snapshots.layout, mine.indices, mine.part(mine.parts.snapshots));
  // members[case][time][regime]
  const std::vector<std::int64_t> members = sum_batches(
      comm, merge_shape(plan), times * n_reg, mine.indices,
      mine.count_part(mine.parts.regimes_offset, times * n_reg));
  std::vector<stats::Moments> merged(n_cases * times * n_obs);
  for (std::size_t i = 0; i < merged.size(); ++i) merged[i] = stats::Moments::unpack(moments.data() + 3 * i);

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
