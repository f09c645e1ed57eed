// Fixed-order reduction of the members' standard errors (see reduce_errors.hpp).
#include "parallel/reduce_errors.hpp"

#include <cmath>

#include "parallel/batch_summary.hpp"
#include "stats/member_errors.hpp"

namespace chaosweep::parallel {

void reduce_time_mean_errors(const plan::Plan& plan, const MergedCases& merged, EnsembleResults& r) {
  const int n_obs = static_cast<int>(plan.observables.size());
  const std::size_t n_cases = plan.cases.size();
  constexpr int kSums = stats::MemberErrorSums::kPacked;

  // sums[case][observable]
  std::vector<stats::MemberErrorSums> sums(n_cases * static_cast<std::size_t>(n_obs));
  for (std::size_t c = 0; c < n_cases; ++c) {
    for (int o = 0; o < n_obs; ++o) {
      sums[c * n_obs + o].merge(merged.at(c, merged.parts.errors + static_cast<std::size_t>(o * kSums)));
    }
  }

  r.time_mean_stderr.assign(n_cases * n_obs, NAN);
  r.effective_samples.assign(n_cases * n_obs, NAN);
  r.decorrelation_time.assign(n_cases * n_obs, NAN);
  r.member_stderr_rms.assign(n_cases * n_obs, NAN);
  r.member_time_variance.assign(n_cases * n_obs, NAN);
  r.time_mean_ci95.assign(n_cases * n_obs * 2, NAN);
  for (std::size_t c = 0; c < n_cases; ++c) {
    const double valid = static_cast<double>(r.valid_members[c]);
    if (valid < 1.0) continue;
    for (int o = 0; o < n_obs; ++o) {
      const std::size_t i = c * n_obs + o;
      const stats::TimeMeanErrors e =
          stats::time_mean_errors(sums[i], valid, r.time_mean[i], r.time_mean_std[i]);
      r.effective_samples[i] = e.effective_samples;
      r.decorrelation_time[i] = e.decorrelation_time;
      r.time_mean_stderr[i] = e.stderr_;
      r.member_stderr_rms[i] = e.member_stderr_rms;
      r.member_time_variance[i] = e.member_time_variance;
      r.time_mean_ci95[2 * i] = e.ci_low;
      r.time_mean_ci95[2 * i + 1] = e.ci_high;
    }
  }
}

}  // namespace chaosweep::parallel
