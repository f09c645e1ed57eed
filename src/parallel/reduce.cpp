// Fixed-order reduction of per-batch results (see reduce.hpp).
#include "parallel/reduce.hpp"

#include <cmath>
#include <functional>

#include "parallel/batch_summary.hpp"
#include "parallel/merge_batches.hpp"
#include "parallel/reduce_errors.hpp"
#include "results/table.hpp"
#include "stats/dynamics_check.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::parallel {
namespace {

constexpr int kMomentWidth = stats::Moments::kPacked;

/// Writes the estimates of every table entry that estimates `source`, at index `i`.
void store(const stats::EnsembleEstimate& est, const std::string& source, std::size_t i,
           EnsembleResults& r) {
  for (const results::Quantity& q : results::quantities()) {
    if (q.merge != results::Merge::estimate || q.source != source) continue;
    std::vector<double>& out = results::array_of<double>(r, q);
    switch (q.estimate) {
      case results::Estimate::mean: out[i] = est.mean; break;
      case results::Estimate::std: out[i] = est.std; break;
      case results::Estimate::ci95:
        out[2 * i] = est.ci_low;
        out[2 * i + 1] = est.ci_high;
        break;
      default: break;  // computed by another stage
    }
  }
}

/// The cases along axis `a` through case `c`: the sweep grid's other coordinates fixed (cases
/// are the cartesian product of the axes, the last varying fastest).
std::vector<std::size_t> line_through(const spec::Spec& spec, std::size_t c, std::size_t a) {
  std::size_t stride = 1;
  for (std::size_t b = a + 1; b < spec.sweep.size(); ++b) stride *= spec.sweep[b].values.size();
  const std::size_t n = spec.sweep[a].values.size();
  const std::size_t first = c - (c / stride % n) * stride;
  std::vector<std::size_t> line(n);
  for (std::size_t k = 0; k < n; ++k) line[k] = first + k * stride;
  return line;
}

/// Response slopes of every observable's ensemble time mean against the sweep axes, and along
/// each axis how well straight lines describe the time means (on every line of the grid along
/// it, summed).
void fit_slopes(const spec::Spec& spec, const plan::Plan& plan, std::size_t n_axes,
                EnsembleResults& r) {
  const std::size_t n_cases = plan.cases.size(), n_obs = plan.observables.size();
  r.slope.assign(n_axes * n_obs, NAN);
  r.slope_stderr.assign(n_axes * n_obs, NAN);
  r.linear_fit_chi2.assign(n_axes * n_obs, NAN);
  r.linear_fit_dof.assign(n_axes * n_obs, 0);
  r.linear_fit_pvalue.assign(n_axes * n_obs, NAN);
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
    for (std::size_t a = 0; a < n_axes; ++a) {  // a straight line on every line along axis a
      std::vector<stats::FitQuality> lines;
      for (std::size_t c = 0; c < n_cases; ++c) {
        const std::vector<std::size_t> line = line_through(spec, c, a);
        if (line.front() != c) continue;  // each line once, from its first case
        std::vector<std::vector<double>> lx;
        std::vector<double> ly, lse;
        for (std::size_t k = 0; k < line.size(); ++k) {
          lx.push_back({spec.sweep[a].values[k]});
          ly.push_back(y[line[k]]);
          lse.push_back(se[line[k]]);
        }
        lines.push_back(stats::linear_fit_quality(lx, ly, lse));
      }
      const stats::FitQuality q = stats::combined_fit_quality(lines);
      r.linear_fit_chi2[a * n_obs + o] = q.chi2;
      r.linear_fit_dof[a * n_obs + o] = q.dof;
      r.linear_fit_pvalue[a * n_obs + o] = q.p_value;
    }
  }
}

/// How the ensemble means of two paired cases correlate (every case's member m starts from
/// the same state and draws the same noise), per pair-group column: 1 + observables + regimes
/// columns, the first the valid members (Plan::pair_groups).
using PairedCorrelation = std::function<double(std::size_t, std::size_t, std::size_t)>;

PairedCorrelation paired_correlation(const plan::Plan& plan, const MergedCases& merged) {
  if (plan.pair_groups < 2 || merged.parts.pair_width == 0) return {};
  const std::size_t groups = static_cast<std::size_t>(plan.pair_groups);
  const std::size_t width = merged.parts.pair_width / groups;
  // column `column` of case c: counts and group means
  auto means = [&merged, groups, width](std::size_t c, std::size_t column,
                                        std::vector<double>& n, std::vector<double>& mean) {
    n.assign(groups, 0.0);
    mean.assign(groups, 0.0);
    const double* sums = merged.at(c, merged.parts.pair);
    for (std::size_t g = 0; g < groups; ++g) {
      n[g] = sums[g * width];
      mean[g] = n[g] > 0.0 ? sums[g * width + 1 + column] / n[g] : 0.0;
    }
  };
  return [means](std::size_t a, std::size_t b, std::size_t column) {
    if (a == b) return 1.0;
    std::vector<double> n_a, mean_a, n_b, mean_b;
    means(a, column, n_a, mean_a);
    means(b, column, n_b, mean_b);
    return stats::group_correlation(n_a, mean_a, n_b, mean_b);
  };
}

/// Local slopes of `values` [case][width] (errors `errors`) along every axis into
/// `slope`, `slope_se` [axis][case][width]; with paired cases `rho` gives the correlation of
/// two cases' values in a column (`first_column` + the column of `values`).
void local_slopes(const spec::Spec& spec, std::size_t n_cases, std::size_t width,
                  const std::vector<double>& values, const std::vector<double>& errors,
                  const PairedCorrelation& rho, std::size_t first_column,
                  std::vector<double>& slope, std::vector<double>& slope_se) {
  const std::size_t axes = spec.sweep.size();
  slope.assign(axes * n_cases * width, NAN);
  slope_se.assign(axes * n_cases * width, NAN);
  for (std::size_t a = 0; a < axes; ++a) {
    const std::vector<double>& x = spec.sweep[a].values;
    for (std::size_t c = 0; c < n_cases; ++c) {
      const std::vector<std::size_t> line = line_through(spec, c, a);
      if (line.front() != c) continue;  // each line once, from its first case
      for (std::size_t k = 0; k < width; ++k) {
        std::vector<double> y, se;
        for (std::size_t at : line) {
          y.push_back(values[at * width + k]);
          se.push_back(errors[at * width + k]);
        }
        std::function<double(std::size_t, std::size_t)> correlation;
        if (rho) {
          correlation = [&rho, &line, first_column, k](std::size_t i, std::size_t j) {
            return rho(line[i], line[j], first_column + k);
          };
        }
        const std::vector<stats::Slope> d = stats::gradient_along(x, y, se, correlation);
        for (std::size_t i = 0; i < line.size(); ++i) {
          slope[(a * n_cases + line[i]) * width + k] = d[i].slope;
          slope_se[(a * n_cases + line[i]) * width + k] = d[i].stderr_;
        }
      }
    }
  }
}

/// The local response along each axis: time means, and regime fractions.
void local_response(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged,
                    EnsembleResults& r) {
  const std::size_t n_cases = plan.cases.size(), n_obs = plan.observables.size();
  const std::size_t n_regimes = plan.regime_labels.size();
  if (spec.sweep.empty()) return;
  const PairedCorrelation rho = paired_correlation(plan, merged);
  local_slopes(spec, n_cases, n_obs, r.time_mean, r.time_mean_stderr, rho, 0, r.local_slope,
               r.local_slope_stderr);
  if (n_regimes == 0) return;
  std::vector<double> regime_se(n_cases * n_regimes, NAN);
  for (std::size_t c = 0; c < n_cases; ++c) {
    const double n = static_cast<double>(r.valid_members[c]);
    for (std::size_t k = 0; k < n_regimes; ++k) {
      regime_se[c * n_regimes + k] = r.regime_fraction_std[c * n_regimes + k] / std::sqrt(n);
    }
  }
  local_slopes(spec, n_cases, n_regimes, r.regime_fraction, regime_se, rho, n_obs,
               r.local_slope_regime, r.local_slope_regime_stderr);
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
  LocalPartial mine(spec, plan, local.empty() ? 0 : local.front().batch_index);
  for (const run::BatchResult& b : local) mine.add(b);
  return reduce(comm, spec, plan, mine);
}

EnsembleResults reduce(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                       const LocalPartial& mine) {
  return reduce(spec, plan, merge_cases(comm, mine));
}

EnsembleResults reduce(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged) {
  const int n_obs = static_cast<int>(plan.observables.size());
  const std::size_t bins =
      spec.statistics.histogram.enabled ? static_cast<std::size_t>(spec.statistics.histogram.bins) : 0;
  const int n_lyap = spec.statistics.lyapunov.enabled ? spec.statistics.lyapunov.exponents : 0;
  const std::size_t n_cases = plan.cases.size();
  const std::vector<Estimated> estimated = estimated_quantities(plan);
  const std::size_t columns = merged.parts.columns;

  // moments[case][column] over the estimated columns
  std::vector<stats::Moments> moments(n_cases * columns);
  for (std::size_t c = 0; c < n_cases; ++c) {
    for (std::size_t k = 0; k < columns; ++k) {
      moments[c * columns + k] =
          stats::Moments::unpack(merged.at(c, merged.parts.estimated + k * kMomentWidth));
    }
  }
  EnsembleResults r;
  r.histogram.assign(n_cases * bins, 0);
  r.non_finite_members = 0;
  for (std::size_t c = 0; c < n_cases; ++c) {
    const std::int64_t* counts = merged.counts_at(c, merged.parts.histogram);
    std::copy(counts, counts + bins, r.histogram.begin() + static_cast<std::ptrdiff_t>(c * bins));
    r.non_finite_members += *merged.counts_at(c, 0);
  }

  // Every estimate array sized [case][width] (intervals [case][width][2]) and filled.
  std::size_t first_column = 0;
  for (const Estimated& e : estimated) {
    for (const results::Quantity& q : results::quantities()) {
      if (q.merge != results::Merge::estimate || q.source != e.quantity->name) continue;
      const std::size_t n = n_cases * e.width * (q.estimate == results::Estimate::ci95 ? 2 : 1);
      results::array_of<double>(r, q).assign(n, NAN);
    }
    for (std::size_t c = 0; c < n_cases; ++c) {
      for (std::size_t k = 0; k < e.width; ++k) {
        const stats::Moments& m = moments[c * columns + first_column + k];
        store(stats::estimate(m), e.quantity->name, c * e.width + k, r);
      }
    }
    first_column += e.width;
  }
  // Members are independent draws (distinct perturbations, decorrelated after spin-up), so
  // every valid member counts as one independent sample of the case's time-mean statistics.
  r.valid_members.assign(n_cases, 0);
  r.effective_members.assign(n_cases, 0.0);
  for (std::size_t c = 0; c < n_cases; ++c) {
    const std::int64_t valid = n_obs > 0 ? static_cast<std::int64_t>(moments[c * columns].n) : 0;
    r.valid_members[c] = valid;
    r.effective_members[c] = static_cast<double>(valid);
  }
  reduce_time_mean_errors(plan, merged, r);
  fit_slopes(spec, plan, spec.sweep.size(), r);
  local_response(spec, plan, merged, r);
  reduce_twins(spec, plan, merged, r);
  reduce_snapshots(spec, plan, merged, r);
  reduce_transient(spec, plan, merged, r);
  reduce_predicted_response(spec, plan, merged, r);
  check_cases(spec, plan, n_lyap, r);
  return r;
}

}  // namespace chaosweep::parallel
