// Fixed-order reduction of per-batch results (see reduce.hpp).
#include "parallel/reduce.hpp"

#include <cmath>

#include "parallel/reduce_errors.hpp"
#include "stats/dynamics_check.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::parallel {
namespace {

/// Per-batch summary layout: for each observable (n, mean, m2), then for each regime
/// (n, mean, m2) of the regime fraction. Histogram counts travel separately (integers).
constexpr int kMomentWidth = stats::Moments::kPacked;

/// Moments across the valid members of one batch of a quantity stored [count][width].
stats::Moments batch_moments(const run::BatchResult& b, const std::vector<double>& values,
                             int width, int column) {
  stats::Moments m;
  for (int i = 0; i < b.count; ++i) {
    if (b.status[i] != run::kValid) continue;
    m.add(values[static_cast<std::size_t>(i) * width + column]);
  }
  return m;
}

std::vector<double> summarise(const std::vector<run::BatchResult>& local, int n_obs, int n_reg,
                              int n_lyap) {
  std::vector<double> out;
  out.reserve(local.size() * kMomentWidth * (n_obs + n_reg + n_lyap));
  for (const run::BatchResult& b : local) {
    for (int o = 0; o < n_obs; ++o) batch_moments(b, b.time_mean, n_obs, o).append_to(out);
    for (int r = 0; r < n_reg; ++r) batch_moments(b, b.regime_fraction, n_reg, r).append_to(out);
    for (int k = 0; k < n_lyap; ++k) batch_moments(b, b.lyapunov, n_lyap, k).append_to(out);
  }
  return out;
}

void store(const stats::EnsembleEstimate& e, std::size_t i, std::vector<double>& mean,
           std::vector<double>& std, std::vector<double>& ci) {
  mean[i] = e.mean;
  std[i] = e.std;
  ci[2 * i] = e.ci_low;
  ci[2 * i + 1] = e.ci_high;
}

/// Response slopes of every observable's ensemble time mean against the sweep axes.
void fit_slopes(const plan::Plan& plan, std::size_t n_axes, EnsembleResults& r) {
  const std::size_t n_cases = plan.cases.size(), n_obs = plan.observables.size();
  r.slope.assign(n_axes * n_obs, NAN);
  r.slope_stderr.assign(n_axes * n_obs, NAN);
  if (n_axes == 0) return;
  std::vector<std::vector<double>> x(n_cases);
  for (std::size_t c = 0; c < n_cases; ++c) x[c] = plan.cases[c].axis_values;
  for (std::size_t o = 0; o < n_obs; ++o) {
    std::vector<double> y(n_cases), se(n_cases);
    for (std::size_t c = 0; c < n_cases; ++c) {
      y[c] = r.time_mean[c * n_obs + o];
      se[c] = r.time_mean_stderr[c * n_obs + o];  // across and within members (reduce_errors)
    }
    const std::vector<stats::Slope> fits = stats::response_slopes(x, y, se);
    for (std::size_t a = 0; a < n_axes; ++a) {
      r.slope[a * n_obs + o] = fits[a].slope;
      r.slope_stderr[a * n_obs + o] = fits[a].stderr_;
    }
  }
}

/// Flags the cases that do not behave chaotically (stats/dynamics_check.hpp); needs the
/// time-mean errors, the Lyapunov exponents and the twins already reduced.
void check_cases(const spec::Spec& spec, const plan::Plan& plan, int n_lyap, EnsembleResults& r) {
  const std::size_t n_cases = plan.cases.size(), n_obs = plan.observables.size();
  r.non_chaotic.assign(n_cases, 0);
  r.non_chaotic_reason.assign(n_cases, "");
  for (std::size_t c = 0; c < n_cases; ++c) {
    auto slice = [&](const std::vector<double>& v) {
      return std::vector<double>(v.begin() + c * n_obs, v.begin() + (c + 1) * n_obs);
    };
    stats::CaseEvidence e;
    e.valid_members = r.valid_members[c];
    e.time_mean = slice(r.time_mean);
    e.across_std = slice(r.time_mean_std);
    e.member_stderr_rms = slice(r.member_stderr_rms);
    e.within_variance = slice(r.member_time_variance);
    e.leading_exponent = n_lyap > 0 ? r.lyapunov[c * n_lyap] : NAN;
    e.exponent_tolerance = stats::exponent_tolerance(spec.integration.duration);
    if (!r.twins_not_separating.empty()) {
      e.twins_not_separating = r.twins_not_separating[c] != 0;
      e.twin_note = r.growth_note[c];
    }
    const stats::CaseVerdict v = stats::check_dynamics(e);
    r.non_chaotic[c] = v.non_chaotic ? 1 : 0;
    r.non_chaotic_reason[c] = v.reason;
  }
}

}  // namespace

EnsembleResults reduce(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                       const std::vector<run::BatchResult>& local) {
  const int n_obs = static_cast<int>(plan.observables.size());
  const int n_reg = static_cast<int>(plan.regime_labels.size());
  const int bins = spec.statistics.histogram.enabled ? spec.statistics.histogram.bins : 0;
  const int n_lyap = spec.statistics.lyapunov.enabled ? spec.statistics.lyapunov.exponents : 0;
  const std::size_t n_cases = plan.cases.size();
  const std::size_t per_batch = static_cast<std::size_t>(kMomentWidth * (n_obs + n_reg + n_lyap));

  const std::vector<double> all =
      comm.allgather_in_rank_order(summarise(local, n_obs, n_reg, n_lyap));
  std::vector<std::int64_t> local_counts;
  std::int64_t local_bad = 0;
  for (const run::BatchResult& b : local) {
    local_counts.insert(local_counts.end(), b.histogram.begin(), b.histogram.end());
    for (int i = 0; i < b.count; ++i) local_bad += b.status[i] != run::kValid ? 1 : 0;
  }
  const std::vector<std::int64_t> counts = comm.allgather_in_rank_order(local_counts);

  // Merge per case in batch order.
  std::vector<stats::Moments> obs(n_cases * n_obs), reg(n_cases * n_reg), lyap(n_cases * n_lyap);
  EnsembleResults r;
  r.histogram.assign(n_cases * bins, 0);
  for (const plan::Batch& b : plan.batches) {
    const double* p = all.data() + static_cast<std::size_t>(b.index) * per_batch;
    const std::size_t c = static_cast<std::size_t>(b.case_index);
    for (int o = 0; o < n_obs; ++o, p += kMomentWidth) obs[c * n_obs + o].merge(stats::Moments::unpack(p));
    for (int k = 0; k < n_reg; ++k, p += kMomentWidth) reg[c * n_reg + k].merge(stats::Moments::unpack(p));
    for (int k = 0; k < n_lyap; ++k, p += kMomentWidth) lyap[c * n_lyap + k].merge(stats::Moments::unpack(p));
    for (int k = 0; k < bins; ++k)
      r.histogram[c * bins + k] += counts[static_cast<std::size_t>(b.index) * bins + k];
  }

  r.valid_members.assign(n_cases, 0);
  r.effective_members.assign(n_cases, 0.0);
  r.time_mean.assign(n_cases * n_obs, NAN);
  r.time_mean_std.assign(n_cases * n_obs, NAN);
  r.time_mean_ci95.assign(n_cases * n_obs * 2, NAN);
  r.regime_fraction.assign(n_cases * n_reg, NAN);
  r.regime_fraction_std.assign(n_cases * n_reg, NAN);
  r.regime_fraction_ci95.assign(n_cases * n_reg * 2, NAN);
  r.lyapunov.assign(n_cases * n_lyap, NAN);
  r.lyapunov_std.assign(n_cases * n_lyap, NAN);
  r.lyapunov_ci95.assign(n_cases * n_lyap * 2, NAN);
  for (std::size_t c = 0; c < n_cases; ++c) {
    for (int o = 0; o < n_obs; ++o) {
      const std::size_t i = c * n_obs + o;
      store(stats::estimate(obs[i]), i, r.time_mean, r.time_mean_std, r.time_mean_ci95);
    }
    for (int k = 0; k < n_reg; ++k) {
      const std::size_t i = c * n_reg + k;
      store(stats::estimate(reg[i]), i, r.regime_fraction, r.regime_fraction_std,
            r.regime_fraction_ci95);
    }
    for (int k = 0; k < n_lyap; ++k) {
      const std::size_t i = c * n_lyap + k;
      store(stats::estimate(lyap[i]), i, r.lyapunov, r.lyapunov_std, r.lyapunov_ci95);
    }
    // Members are independent draws (distinct perturbations, decorrelated after spin-up), so
    // every valid member counts as one independent sample of the case's time-mean statistics.
    const std::int64_t valid = n_obs > 0 ? static_cast<std::int64_t>(obs[c * n_obs].n) : 0;
    r.valid_members[c] = valid;
    r.effective_members[c] = static_cast<double>(valid);
  }
  r.non_finite_members = comm.sum(local_bad);
  reduce_time_mean_errors(comm, plan, local, r);
  fit_slopes(plan, spec.sweep.size(), r);
  reduce_twins(comm, spec, plan, local, r);
  reduce_snapshots(comm, spec, plan, local, r);
  check_cases(spec, plan, n_lyap, r);
  return r;
}

}  // namespace chaosweep::parallel
