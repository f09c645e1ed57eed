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

// The transient response against the paired reference case. Per case, snapshot time and
// observable the merged moments (n, mean, m2) of the members' differences from the reference's
// same members give the response (mean) and its interval mean +- t(0.975, n-1) s / sqrt(n);
// the time of emergence is the first snapshot time from which every interval excludes 0; the
// variance reduction is var(differences) / (var(case) + var(reference)) averaged over the
// snapshot times whose denominator is positive. After reduce_snapshots (it reads the case and
// reference variances).
void reduce_transient(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged,
                      EnsembleResults& r) {
  const std::size_t times = static_cast<std::size_t>(plan.snapshot_count);
  if (times == 0 || !plan.outputs.paired) return;
  const std::size_t n_obs = plan.observables.size(), n_cases = plan.cases.size();
  const std::size_t ref = static_cast<std::size_t>(spec.ensemble.pair_with_case);
  const std::size_t per_case = times * n_obs;
  r.transient_time = r.snapshot_time;
  r.transient_response.assign(n_cases * per_case, NAN);
  r.transient_response_ci95.assign(2 * n_cases * per_case, NAN);
  r.transient_reference_std.assign(per_case, NAN);
  r.transient_emergence_time.assign(n_cases * n_obs, NAN);
  r.transient_variance_reduction.assign(n_cases * n_obs, NAN);
  if (ref < n_cases) {
    for (std::size_t i = 0; i < per_case; ++i) {
      r.transient_reference_std[i] = std::sqrt(r.snapshot_variance[ref * per_case + i]);
    }
  }
  for (std::size_t c = 0; c < n_cases; ++c) {
    const double* p = merged.at(c, merged.parts.snapshots) + stats::Moments::kPacked * per_case;
    std::vector<double> ratio_sum(n_obs, 0.0), ratio_count(n_obs, 0.0);
    for (std::size_t k = 0; k < times; ++k) {
      for (std::size_t o = 0; o < n_obs; ++o) {
        const std::size_t i = k * n_obs + o, at = c * per_case + i;
        const stats::Moments m = stats::Moments::unpack(p + stats::Moments::kPacked * i);
        const stats::EnsembleEstimate e = stats::estimate(m);
        r.transient_response[at] = e.mean;
        r.transient_response_ci95[2 * at] = e.ci_low;
        r.transient_response_ci95[2 * at + 1] = e.ci_high;
        if (ref >= n_cases) continue;
        const double denominator =
            r.snapshot_variance[at] + r.snapshot_variance[ref * per_case + i];
        if (denominator > 0.0 && std::isfinite(denominator) && m.n >= 2.0) {
          ratio_sum[o] += m.variance() / denominator;
          ratio_count[o] += 1.0;
        }
      }
    }
    for (std::size_t o = 0; o < n_obs; ++o) {
      if (ratio_count[o] > 0.0) {
        r.transient_variance_reduction[c * n_obs + o] = ratio_sum[o] / ratio_count[o];
      }
      // the earliest k from which every later interval excludes 0
      std::size_t first = times;
      for (std::size_t k = times; k-- > 0;) {
        const std::size_t at = c * per_case + k * n_obs + o;
        const double low = r.transient_response_ci95[2 * at], high = r.transient_response_ci95[2 * at + 1];
        if (!(low > 0.0 || high < 0.0)) break;
        first = k;
      }
      if (first < times) r.transient_emergence_time[c * n_obs + o] = r.snapshot_time[first];
    }
  }
}

}  // namespace chaosweep::parallel
