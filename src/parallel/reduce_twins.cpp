// Fixed-order reduction of the twin experiment (statistics.twins): per case, the mean and
// standard deviation of the log separation over the valid member-twin pairs at each lead, the
// growth rate of that mean over its linear phase (when its rise is significant), the ensemble
// horizon over the members that reached the threshold, and the survival curve of the pairs
// (the share not yet separated at each lead, pairs that never separated censored at the last
// lead) with its median and the median's interval.
//
// Per batch: the moments (n, mean, m2) of the log separation at each lead over the batch's
// valid pairs (run/twins.cpp, in member order), the moments of the finite horizons of its
// valid members and of the logs of their threshold distances, the number of pairs that
// separated at each lead and the number that did not by the last lead. They are merged per
// case along the fixed merge tree (parallel/merge_batches.hpp), so the results do not depend on
// the rank count.
#include <algorithm>
#include <cmath>

#include "core/error.hpp"
#include "parallel/batch_summary.hpp"
#include "parallel/reduce.hpp"
#include "run/twins.hpp"
#include "stats/ensemble.hpp"
#include "stats/twin_summary.hpp"

namespace chaosweep::parallel {
namespace {

constexpr int kMomentWidth = stats::Moments::kPacked;  // n, mean, m2

}  // namespace

void reduce_twins(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged,
                  EnsembleResults& r) {
  const run::TwinTimes& times = plan.twins;
  if (times.every_steps == 0) return;
  const std::size_t leads = static_cast<std::size_t>(times.leads);
  const std::size_t n_cases = plan.cases.size();
  const std::vector<double> lead = run::twin_leads(times, spec.integration.dt);

  std::vector<stats::TwinPartials> cases(n_cases, stats::TwinPartials(leads));
  for (std::size_t index = 0; index < n_cases; ++index) {
    const double* p = merged.at(index, merged.parts.twin_moments);
    stats::TwinPartials& c = cases[index];
    for (std::size_t k = 0; k < leads; ++k, p += kMomentWidth) {
      c.separation[k] = stats::Moments::unpack(p);
    }
    c.horizon = stats::Moments::unpack(p);
    p += kMomentWidth;
    c.level = stats::Moments::unpack(p);
    const double* q = merged.at(index, merged.parts.twin_sums);
    for (std::size_t k = 0; k < leads; ++k) c.separated[k] = *q++;
    c.unseparated = *q;
  }

  r.twin_log_separation.assign(n_cases * leads, NAN);
  r.twin_log_separation_std.assign(n_cases * leads, NAN);
  r.twin_pairs.assign(n_cases, 0);
  r.growth_rate.assign(n_cases, NAN);
  r.growth_window.assign(n_cases * 2, NAN);
  r.growth_note.assign(n_cases, "");
  r.twins_not_separating.assign(n_cases, 0);
  r.horizon.assign(n_cases, NAN);
  r.horizon_std.assign(n_cases, NAN);
  r.horizon_ci95.assign(n_cases * 2, NAN);
  r.horizon_reached.assign(n_cases, 0);
  r.horizon_median.assign(n_cases, NAN);
  r.horizon_median_ci95.assign(n_cases * 2, NAN);
  r.unseparated_fraction.assign(n_cases * leads, NAN);
  r.suggested_duration.assign(n_cases, NAN);
  for (std::size_t c = 0; c < n_cases; ++c) {
    const stats::TwinSummary t = stats::summarise_twins(lead, cases[c], kMostPairs);
    std::copy(t.log_separation.begin(), t.log_separation.end(),
              r.twin_log_separation.begin() + c * leads);
    std::copy(t.log_separation_std.begin(), t.log_separation_std.end(),
              r.twin_log_separation_std.begin() + c * leads);
    r.twin_pairs[c] = t.pairs;
    r.growth_rate[c] = t.growth_rate;
    r.growth_window[2 * c] = t.window_first;
    r.growth_window[2 * c + 1] = t.window_last;
    r.growth_note[c] = t.growth_note;
    r.twins_not_separating[c] = t.not_separating ? 1 : 0;
    r.horizon[c] = t.horizon.mean;
    r.horizon_std[c] = t.horizon.std;
    r.horizon_ci95[2 * c] = t.horizon.ci_low;
    r.horizon_ci95[2 * c + 1] = t.horizon.ci_high;
    r.horizon_reached[c] = t.horizon.n;
    std::copy(t.unseparated_fraction.begin(), t.unseparated_fraction.end(),
              r.unseparated_fraction.begin() + c * leads);
    r.horizon_median[c] = t.median;
    r.horizon_median_ci95[2 * c] = t.median_low;
    r.horizon_median_ci95[2 * c + 1] = t.median_high;
    r.suggested_duration[c] = t.suggested_duration;
  }
}

}  // namespace chaosweep::parallel
