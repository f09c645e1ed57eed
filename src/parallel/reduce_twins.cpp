// Fixed-order reduction of the twin experiment (statistics.twins): per case, the mean and
// standard deviation of the log separation over the valid member-twin pairs at each lead, the
// growth rate of that mean over its linear phase, and the ensemble horizon over the members
// that reached the threshold.
//
// Per batch: the moments (n, mean, m2) of the log separation at each lead over the batch's
// valid pairs (run/twins.cpp, in member order) and the moments of the finite horizons of its
// valid members. They are gathered in batch order and merged per case in that order, so the
// results do not depend on the rank count.
#include <cmath>

#include "core/error.hpp"
#include "parallel/reduce.hpp"
#include "run/twins.hpp"
#include "stats/ensemble.hpp"
#include "stats/error_growth.hpp"

namespace chaosweep::parallel {
namespace {

constexpr int kMomentWidth = stats::Moments::kPacked;  // n, mean, m2

/// Per batch: [leads][3] log-separation moments, then the horizon's (n, mean, m2).
std::vector<double> summarise_twins(const std::vector<run::BatchResult>& local,
                                    std::size_t leads) {
  std::vector<double> out;
  for (const run::BatchResult& b : local) {
    if (b.twin_moments.size() != leads * kMomentWidth) {
      throw Error("batch " + std::to_string(b.batch_index) + " has no twin results");
    }
    out.insert(out.end(), b.twin_moments.begin(), b.twin_moments.end());
    stats::Moments h;
    for (int i = 0; i < b.count; ++i) {
      if (b.status[i] == run::kValid && std::isfinite(b.horizon[i])) h.add(b.horizon[i]);
    }
    h.append_to(out);
  }
  return out;
}

}  // namespace

void reduce_twins(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                  const std::vector<run::BatchResult>& local, EnsembleResults& r) {
  const run::TwinTimes times = run::twin_times(spec, plan);
  if (times.every_steps == 0) return;
  const std::size_t leads = static_cast<std::size_t>(times.leads);
  const std::size_t n_cases = plan.cases.size();
  const std::size_t per_batch = (leads + 1) * kMomentWidth;
  const std::vector<double> all = comm.allgather_in_rank_order(summarise_twins(local, leads));

  std::vector<stats::Moments> sep(n_cases * leads), horizon(n_cases);
  for (const plan::Batch& b : plan.batches) {
    const double* p = all.data() + static_cast<std::size_t>(b.index) * per_batch;
    const std::size_t c = static_cast<std::size_t>(b.case_index);
    for (std::size_t k = 0; k < leads; ++k, p += kMomentWidth) {
      sep[c * leads + k].merge(stats::Moments::unpack(p));
    }
    horizon[c].merge(stats::Moments::unpack(p));
  }

  const std::vector<double> lead = run::twin_leads(times, spec.integration.dt);
  r.twin_log_separation.assign(n_cases * leads, NAN);
  r.twin_log_separation_std.assign(n_cases * leads, NAN);
  r.twin_pairs.assign(n_cases, 0);
  r.growth_rate.assign(n_cases, NAN);
  r.growth_window.assign(n_cases * 2, NAN);
  r.horizon.assign(n_cases, NAN);
  r.horizon_std.assign(n_cases, NAN);
  r.horizon_ci95.assign(n_cases * 2, NAN);
  r.horizon_reached.assign(n_cases, 0);
  for (std::size_t c = 0; c < n_cases; ++c) {
    std::vector<double> mean(leads);
    for (std::size_t k = 0; k < leads; ++k) {
      const stats::Moments& m = sep[c * leads + k];
      mean[k] = m.n > 0.0 ? m.mean : NAN;
      r.twin_log_separation[c * leads + k] = mean[k];
      r.twin_log_separation_std[c * leads + k] = m.stddev();
    }
    r.twin_pairs[c] = static_cast<std::int64_t>(sep[c * leads].n);
    const stats::GrowthFit fit = stats::fit_growth_rate(lead, mean);
    r.growth_rate[c] = fit.rate;
    r.growth_window[2 * c] = fit.start;
    r.growth_window[2 * c + 1] = fit.end;
    const stats::EnsembleEstimate e = stats::estimate(horizon[c]);
    r.horizon[c] = e.mean;
    r.horizon_std[c] = e.std;
    r.horizon_ci95[2 * c] = e.ci_low;
    r.horizon_ci95[2 * c + 1] = e.ci_high;
    r.horizon_reached[c] = e.n;
  }
}

}  // namespace chaosweep::parallel
