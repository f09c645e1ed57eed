// Fixed-order reduction of the members' standard errors (see reduce_errors.hpp).
#include "parallel/reduce_errors.hpp"

#include <cmath>

#include "stats/blocking.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::parallel {
namespace {

/// Per-batch sums over the valid members, per observable: n_eff, stderr^2, tau_int (time
/// units), time variance.
constexpr int kSums = 4;

std::vector<double> summarise(const std::vector<run::BatchResult>& local, int n_obs) {
  std::vector<double> out;
  out.reserve(local.size() * kSums * static_cast<std::size_t>(n_obs));
  for (const run::BatchResult& b : local) {
    for (int o = 0; o < n_obs; ++o) {
      double samples = 0.0, variance = 0.0, tau = 0.0, time_variance = 0.0;
      for (int i = 0; i < b.count; ++i) {
        if (b.status[i] != run::kValid) continue;
        const std::size_t k = static_cast<std::size_t>(i) * n_obs + o;
        samples += b.time_mean_samples[k];
        variance += b.time_mean_stderr[k] * b.time_mean_stderr[k];
        tau += b.time_mean_tau[k];
        time_variance += b.time_variance[k];
      }
      out.push_back(samples);
      out.push_back(variance);
      out.push_back(tau);
      out.push_back(time_variance);
    }
  }
  return out;
}

}  // namespace

void reduce_time_mean_errors(const Communicator& comm, const plan::Plan& plan,
                             const std::vector<run::BatchResult>& local, EnsembleResults& r) {
  const int n_obs = static_cast<int>(plan.observables.size());
  const std::size_t n_cases = plan.cases.size();
  const std::size_t per_batch = static_cast<std::size_t>(kSums * n_obs);
  const std::vector<double> all = comm.allgather_in_rank_order(summarise(local, n_obs));

  // sums[case][observable][kSums], added in batch order
  std::vector<double> sums(n_cases * per_batch, 0.0);
  for (const plan::Batch& b : plan.batches) {
    const double* p = all.data() + static_cast<std::size_t>(b.index) * per_batch;
    double* s = sums.data() + static_cast<std::size_t>(b.case_index) * per_batch;
    for (std::size_t k = 0; k < per_batch; ++k) s[k] += p[k];
  }

  r.time_mean_stderr.assign(n_cases * n_obs, NAN);
  r.effective_samples.assign(n_cases * n_obs, NAN);
  r.decorrelation_time.assign(n_cases * n_obs, NAN);
  r.member_stderr_rms.assign(n_cases * n_obs, NAN);
  r.member_time_variance.assign(n_cases * n_obs, NAN);
  for (std::size_t c = 0; c < n_cases; ++c) {
    const double valid = static_cast<double>(r.valid_members[c]);
    if (valid < 1.0) continue;
    for (int o = 0; o < n_obs; ++o) {
      const std::size_t i = c * n_obs + o;
      const double* s = sums.data() + i * kSums;
      r.effective_samples[i] = s[0];
      r.decorrelation_time[i] = s[2] / valid;
      r.time_mean_stderr[i] = stats::ensemble_mean_stderr(r.time_mean_std[i], valid, s[1]);
      r.member_stderr_rms[i] = std::sqrt(s[1] / valid);
      r.member_time_variance[i] = s[3] / valid;
      // The interval of the ensemble mean from the larger of the across-member and the
      // within-member error (the same t quantile, n - 1 degrees of freedom).
      const double half = stats::student_t975(valid - 1.0) * r.time_mean_stderr[i];
      r.time_mean_ci95[2 * i] = r.time_mean[i] - half;
      r.time_mean_ci95[2 * i + 1] = r.time_mean[i] + half;
    }
  }
}

}  // namespace chaosweep::parallel
