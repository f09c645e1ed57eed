// Fixed-order reduction of the batches' snapshot statistics (see reduce.hpp).
//
// Each batch carries, per snapshot time k and observable o, the moments (n, mean, m2) across
// its valid members, and per regime the number of its valid members in it. The moments are
// merged per case with Chan's pairwise update along the fixed merge tree
// (parallel/merge_batches.hpp), the counts summed, so the result is bitwise the same for any
// number of ranks:
//   mean = merged mean,  variance = m2 / (n - 1),  regime fraction = count / valid members.
#include <algorithm>
#include <cmath>

#include "parallel/batch_summary.hpp"
#include "parallel/reduce.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::parallel {

void reduce_snapshots(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged,
                      EnsembleResults& r) {
  const std::size_t times = static_cast<std::size_t>(plan.snapshot_count);
  if (times == 0) return;
  const std::size_t n_obs = plan.observables.size(), n_reg = plan.regime_labels.size();
  const std::size_t n_cases = plan.cases.size();
  // moments[case][time][observable], members[case][time][regime]
  std::vector<stats::Moments> moments(n_cases * times * n_obs);
  std::vector<std::int64_t> members(n_cases * times * n_reg);
  for (std::size_t c = 0; c < n_cases; ++c) {
    const double* p = merged.at(c, merged.parts.snapshots);
    for (std::size_t i = 0; i < times * n_obs; ++i) moments[c * times * n_obs + i] = stats::Moments::unpack(p + 3 * i);
    const std::int64_t* q = merged.counts_at(c, merged.parts.regimes);
    std::copy(q, q + times * n_reg, members.begin() + static_cast<std::ptrdiff_t>(c * times * n_reg));
  }

  r.snapshot_time.resize(times);
  for (std::size_t k = 0; k < times; ++k) {
    const std::int64_t step = plan.spinup_steps + static_cast<std::int64_t>(k) * plan.snapshot_every_steps;
    r.snapshot_time[k] = static_cast<double>(step) * spec.integration.dt;
  }
  r.snapshot_mean.assign(moments.size(), NAN);
  r.snapshot_variance.assign(moments.size(), NAN);
  for (std::size_t i = 0; i < moments.size(); ++i) {
    if (moments[i].n > 0.0) r.snapshot_mean[i] = moments[i].mean;
    r.snapshot_variance[i] = moments[i].variance();
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
