// The table of results (see table.hpp), in archive order.
#include "results/table.hpp"

#include <algorithm>

#include <stdexcept>

#include <nlohmann/json.hpp>

namespace chaosweep::results {
namespace {

using B = BatchResult;
using E = EnsembleResults;
using Dims = std::vector<std::string>;
constexpr const char* kTime = kModelTime;
constexpr const char* kRate = kPerModelTime;

template <class T>
constexpr ElementType element_type() {
  if constexpr (std::is_same_v<T, double>) return ElementType::float64;
  if constexpr (std::is_same_v<T, std::int64_t>) return ElementType::int64;
  if constexpr (std::is_same_v<T, std::uint8_t>) return ElementType::uint8;
  return ElementType::text;
}

Quantity describe(std::string name, std::string path, Dims dims, std::string units,
                  std::string long_name, Switch when) {
  Quantity q;
  q.name = std::move(name);
  q.path = std::move(path);
  q.dims = std::move(dims);
  q.units = std::move(units);
  q.long_name = std::move(long_name);
  q.when = when;
  return q;
}

/// A coordinate the archive writer takes from the plan.
Quantity coordinate(std::string path, Dims dims, ElementType type, std::string units,
                    std::string long_name, Switch when) {
  Quantity q = describe(path.substr(1), path, std::move(dims), std::move(units),
                        std::move(long_name), when);
  q.type = type;
  q.scope = Scope::coordinate;
  return q;
}

/// A per-member row of a BatchResult (archived at `path` unless it is empty).
template <class T>
Quantity member(std::string name, std::vector<T> B::*field, std::string path, Dims dims,
                std::string units, std::string long_name, Switch when,
                Merge merge = Merge::rows) {
  Quantity q = describe(std::move(name), std::move(path), std::move(dims), std::move(units),
                        std::move(long_name), when);
  q.type = element_type<T>();
  q.scope = Scope::member;
  q.merge = merge;
  q.batch_field = field;
  return q;
}

/// A per-batch partial summary of a BatchResult.
template <class T>
Quantity batch(std::string name, std::vector<T> B::*field, std::string path, Dims dims,
               std::string units, std::string long_name, Switch when, Merge merge) {
  Quantity q = member(std::move(name), field, std::move(path), std::move(dims),
                      std::move(units), std::move(long_name), when, merge);
  q.scope = Scope::batch;
  return q;
}

/// How an ensemble quantity is obtained: an estimate of a member quantity, or a computation.
struct How {
  Merge merge = Merge::derived;
  std::string source;
  Estimate estimate = Estimate::none;
  std::string text;
};
How estimate(std::string source, Estimate e) { return {Merge::estimate, std::move(source), e, ""}; }
How derived(std::string text) { return {Merge::derived, "", Estimate::none, std::move(text)}; }
/// Computed outside the reduction of member moments, as statistic `e` of the estimate `source`.
How derived_of(std::string source, Estimate e, std::string text) {
  return {Merge::derived, std::move(source), e, std::move(text)};
}
How merged(Merge m, std::string text) { return {m, "", Estimate::none, std::move(text)}; }

/// An EnsembleResults array; its name is its path without the leading "/" unless given.
template <class T>
Quantity ensemble(std::vector<T> E::*field, std::string path, Dims dims, std::string units,
                  std::string long_name, Switch when, How how, std::string name = "") {
  if (name.empty()) name = path.substr(1);
  Quantity q = describe(std::move(name), std::move(path), std::move(dims), std::move(units),
                        std::move(long_name), when);
  q.type = element_type<T>();
  q.scope = Scope::ensemble;
  q.merge = how.merge;
  q.source = std::move(how.source);
  q.estimate = how.estimate;
  q.how = std::move(how.text);
  q.ensemble_field = field;
  return q;
}

using T = ElementType;
using S = Switch;
using M = Merge;

constexpr const char* kHorizonMoments =
    "moments of the members' finite horizons, merged along the batch merge tree";
constexpr const char* kSurvival = "stats::survival of the pairs' separation leads";

std::vector<Quantity> make_table() {
  return {
      coordinate("/observable", {"observable"}, T::text, "1", "name of each observable", S::always),
      coordinate("/case/case", {"case"}, T::int64, "1", "case index (point of the sweep grid)",
                 S::always),
      coordinate("/case/<parameter>", {"case"}, T::float64, "1",
                 "swept value of this model parameter", S::sweep),
      // per member
      member("initial_state", &B::initial_state, "/member/initial_state",
             {"case", "member", "state"}, "1",
             "state the member started from (after the base spin-up and perturbation)",
             S::always),
      member("status", &B::status, "/member/status", {"case", "member"}, "1",
             "member status: 0 valid, 1 non-finite (excluded from every estimate)", S::always),
      member("time_mean", &B::time_mean, "/member/time_mean", {"case", "member", "observable"},
             "1", "time mean of the observable over the accumulation window", S::always,
             M::member_moments),
      member("time_variance", &B::time_variance, "/member/time_variance",
             {"case", "member", "observable"}, "1",
             "time variance of the observable over the accumulation window (n-1 denominator)",
             S::always),
      member("time_mean_stderr", &B::time_mean_stderr, "/member/time_mean_stderr",
             {"case", "member", "observable"}, "1",
             "standard error of the time mean allowing for autocorrelation (blocking "
             "estimate; NaN for invalid members and for windows shorter than 16 blocks of 256 "
             "steps)",
             S::always),
      member("time_mean_tau", &B::time_mean_tau, "", {"case", "member", "observable"}, kTime,
             "integrated autocorrelation time of the observable (blocking estimate)", S::always),
      member("time_mean_samples", &B::time_mean_samples, "", {"case", "member", "observable"},
             "1", "effective independent samples of the time mean, n / (2 tau_int)", S::always),
      member("extreme_min", &B::extreme_min, "/member/extreme_min",
             {"case", "member", "observable"}, "1",
             "smallest value of the observable over the samples of the time mean (NaN for "
             "invalid members)",
             S::always),
      member("extreme_max", &B::extreme_max, "/member/extreme_max",
             {"case", "member", "observable"}, "1",
             "largest value of the observable over the samples of the time mean (NaN for "
             "invalid members)",
             S::always),
      member("extreme_min_time", &B::extreme_min_time, "/member/extreme_min_time",
             {"case", "member", "observable"}, kTime,
             "model time of the smallest value, from the start of the integration (spin-up "
             "included; the earliest among equal values)",
             S::always),
      member("extreme_max_time", &B::extreme_max_time, "/member/extreme_max_time",
             {"case", "member", "observable"}, kTime,
             "model time of the largest value, from the start of the integration (spin-up "
             "included; the earliest among equal values)",
             S::always),
      member("regime_fraction", &B::regime_fraction, "/member/regime_fraction",
             {"case", "member", "regime"}, "1", "share of accumulated steps spent in the regime",
             S::regimes, M::member_moments),
      member("regime_mean_residence", &B::regime_mean_residence, "/member/regime_mean_residence",
             {"case", "member", "regime"}, kTime,
             "mean length of an episode in the regime, in model time units (NaN if never "
             "visited)",
             S::regimes, M::member_moments),
      member("regime_transitions", &B::regime_transitions, "/member/regime_transitions",
             {"case", "member"}, "1", "number of regime changes during accumulation",
             S::regimes),
      member("lyapunov", &B::lyapunov, "/member/lyapunov", {"case", "member", "exponent"}, kRate,
             "leading Lyapunov exponents, per model time unit, in descending order (NaN if the "
             "member became non-finite)",
             S::lyapunov, M::member_moments),
      member("spread", &B::spread, "/member/spread", {"case", "member"}, "1",
             "attractor spread of the member: root of the summed variances of its state "
             "variables over the twin lead times (NaN if its twin pair is not valid)",
             S::twins),
      member("horizon", &B::horizon, "/member/horizon", {"case", "member"}, kTime,
             "first lead time, in model time units, at which the twin separation exceeds "
             "threshold times the spread (NaN if never or if the pair is not valid)",
             S::twins),
      // per batch
      batch("histogram", &B::histogram, "", {"bin"}, "1",
            "member-steps of the batch's valid members in each bin", S::histogram, M::sum),
      batch("twin_moments", &B::twin_moments, "", {"lead", "moment"}, "1",
            "(n, mean, m2) of the log twin separation over the batch's valid pairs", S::twins,
            M::moments),
      batch("paired_moments", &B::paired_moments, "", {"time", "observable", "moment"}, "1",
            "(n, mean, m2) of the differences of the batch's members from the reference case's "
            "same members, over the members valid in both",
            S::paired_snapshots, M::moments),
      batch("response_sums", &B::response_sums, "", {"response_group", "response_sum"}, "1",
            "the sums behind the lagged covariances of the observables with the state "
            "(stats::LagSumsLayout) of the batch's members in each group; all 0 when a member "
            "of the batch became non-finite",
            S::response, M::summed),
      batch("snapshot_moments", &B::snapshot_moments, "", {"time", "observable", "moment"}, "1",
            "(n, mean, m2) of the observable across the batch's valid members", S::snapshots,
            M::moments),
      batch("snapshot_regimes", &B::snapshot_regimes, "", {"time", "regime"}, "1",
            "the batch's valid members in the regime at the snapshot time",
            S::snapshot_regimes, M::sum),
      // ensemble estimates
      ensemble(&E::time_mean, "/ensemble/time_mean", {"case", "observable"}, "1",
               "ensemble mean of the members' time means", S::always,
               estimate("time_mean", Estimate::mean)),
      ensemble(&E::time_mean_std, "/ensemble/time_mean_std", {"case", "observable"}, "1",
               "standard deviation of the members' time means across members", S::always,
               estimate("time_mean", Estimate::std)),
      ensemble(&E::time_mean_ci95, "/ensemble/time_mean_ci95", {"case", "observable", "bound"},
               "1", "95% confidence interval of the ensemble mean (Student t)", S::always,
               derived_of("time_mean", Estimate::ci95,
                          "time_mean +- t(0.975, valid members - 1) x time_mean_stderr")),
      ensemble(&E::regime_fraction, "/ensemble/regime_fraction", {"case", "regime"}, "1",
               "ensemble mean of the members' regime fractions", S::regimes,
               estimate("regime_fraction", Estimate::mean)),
      ensemble(&E::regime_fraction_std, "/ensemble/regime_fraction_std", {"case", "regime"}, "1",
               "standard deviation of the regime fraction across members", S::regimes,
               estimate("regime_fraction", Estimate::std)),
      ensemble(&E::regime_fraction_ci95, "/ensemble/regime_fraction_ci95",
               {"case", "regime", "bound"}, "1",
               "95% confidence interval of the ensemble-mean regime fraction (Student t)",
               S::regimes, estimate("regime_fraction", Estimate::ci95)),
      ensemble(&E::regime_mean_residence, "/ensemble/regime_mean_residence", {"case", "regime"},
               kTime,
               "ensemble mean of the members' mean episode lengths in the regime, model time "
               "units, over the valid members that visited it",
               S::regimes, estimate("regime_mean_residence", Estimate::mean)),
      ensemble(&E::regime_mean_residence_std, "/ensemble/regime_mean_residence_std",
               {"case", "regime"}, kTime,
               "standard deviation of the mean episode length across the members that visited "
               "the regime",
               S::regimes, estimate("regime_mean_residence", Estimate::std)),
      ensemble(&E::regime_mean_residence_ci95, "/ensemble/regime_mean_residence_ci95",
               {"case", "regime", "bound"}, kTime,
               "95% confidence interval of the ensemble-mean episode length (Student t)",
               S::regimes, estimate("regime_mean_residence", Estimate::ci95)),
      ensemble(&E::lyapunov, "/ensemble/lyapunov", {"case", "exponent"}, kRate,
               "ensemble mean of the members' Lyapunov exponents, per model time unit",
               S::lyapunov, estimate("lyapunov", Estimate::mean)),
      ensemble(&E::lyapunov_std, "/ensemble/lyapunov_std", {"case", "exponent"}, kRate,
               "standard deviation of the Lyapunov exponents across members", S::lyapunov,
               estimate("lyapunov", Estimate::std)),
      ensemble(&E::lyapunov_ci95, "/ensemble/lyapunov_ci95", {"case", "exponent", "bound"},
               kRate, "95% confidence interval of the ensemble-mean Lyapunov exponent (Student t)",
               S::lyapunov, estimate("lyapunov", Estimate::ci95)),
      ensemble(&E::horizon, "/ensemble/horizon", {"case"}, kTime,
               "mean horizon over the valid members that reached the threshold, model time "
               "units",
               S::twins, derived_of("horizon", Estimate::mean, kHorizonMoments)),
      ensemble(&E::horizon_std, "/ensemble/horizon_std", {"case"}, kTime,
               "standard deviation of the horizon across the members that reached the threshold",
               S::twins, derived_of("horizon", Estimate::std, kHorizonMoments)),
      ensemble(&E::horizon_ci95, "/ensemble/horizon_ci95", {"case", "bound"}, kTime,
               "95% confidence interval of the mean horizon (Student t)", S::twins,
               derived_of("horizon", Estimate::ci95, kHorizonMoments)),
      ensemble(&E::horizon_reached, "/ensemble/horizon_reached", {"case"}, "1",
               "valid members whose twin separation exceeded the threshold", S::twins,
               derived("count of the members' finite horizons")),
      ensemble(&E::valid_members, "/ensemble/valid_members", {"case"}, "1",
               "members with finite states throughout", S::always,
               derived("count of the valid members")),
      ensemble(&E::effective_members, "/ensemble/effective_members", {"case"}, "1",
               "independent members behind each ensemble estimate: the valid members "
               "(independent by construction)",
               S::always, derived("the valid members")),
      ensemble(&E::time_mean_stderr, "/ensemble/time_mean_stderr", {"case", "observable"}, "1",
               "standard error of the ensemble time mean: the larger of the across-member "
               "standard deviation / sqrt(valid members) and sqrt(sum of member standard "
               "errors^2) / valid members",
               S::always, derived_of("time_mean", Estimate::detail,
                                     "stats::ensemble_mean_stderr of the merged member errors")),
      ensemble(&E::effective_samples, "/ensemble/effective_samples", {"case", "observable"}, "1",
               "independent time samples behind the ensemble time mean: sum over valid members "
               "of n / (2 tau_int)",
               S::always, derived_of("time_mean", Estimate::detail,
                                     "sum of the members' time_mean_samples along the batch merge tree")),
      ensemble(&E::decorrelation_time, "/ensemble/decorrelation_time", {"case", "observable"},
               kTime,
               "ensemble mean of the members' integrated autocorrelation times tau_int, in model "
               "time units",
               S::always, derived_of("time_mean", Estimate::detail,
                                     "mean of the members' time_mean_tau along the batch merge tree")),
      ensemble(&E::member_stderr_rms, "", {"case", "observable"}, "1",
               "root mean square of the valid members' standard errors of the time mean",
               S::always, derived("mean of the members' squared errors along the batch merge tree"),
               "member_stderr_rms"),
      ensemble(&E::member_time_variance, "", {"case", "observable"}, "1",
               "mean of the valid members' time variances", S::always,
               derived("mean of the members' time variances along the batch merge tree"),
               "member_time_variance"),
      ensemble(&E::non_chaotic, "/ensemble/non_chaotic", {"case"}, "1",
               "1 when the case does not behave chaotically (leading Lyapunov exponent below "
               "max(0.01, 2/duration), members settled on fixed points, members' time means "
               "coinciding, or twins not separating), else 0; the attribute reason lists the "
               "flagged cases",
               S::always, derived("stats::check_dynamics of the case's estimates")),
      ensemble(&E::non_chaotic_reason, "/ensemble/non_chaotic_reason", {"case"}, "1",
               "why the case is flagged non-chaotic (empty when it is not)", S::always,
               derived("stats::check_dynamics of the case's estimates")),
      // response to the sweep
      ensemble(&E::slope, "/response/slope", {"axis", "observable"}, "1",
               "least-squares slope of the ensemble time mean against the swept parameter",
               S::sweep, derived("stats::response_slopes of the cases' time means")),
      ensemble(&E::slope_stderr, "/response/slope_stderr", {"axis", "observable"}, "1",
               "standard error of the slope, propagated from each case's "
               "/ensemble/time_mean_stderr",
               S::sweep, derived("stats::response_slopes of the cases' time means")),
      ensemble(&E::linear_fit_chi2, "/response/linear_fit_chi2", {"axis", "observable"}, "1",
               "test of a linear response along the swept parameter: on every line of the case "
               "grid along it (the other parameters fixed) the weighted least-squares line of "
               "the cases' ensemble time means (weights 1 / /ensemble/time_mean_stderr^2), the "
               "chi-squares of its residuals summed over the lines: large when the response "
               "along the parameter is not linear",
               S::sweep, derived("stats::linear_fit_quality per line, stats::combined_fit_quality")),
      ensemble(&E::linear_fit_dof, "/response/linear_fit_dof", {"axis", "observable"}, "1",
               "degrees of freedom of that chi-square: the cases used on each line minus 2, "
               "summed over the lines with 3 or more",
               S::sweep, derived("stats::linear_fit_quality per line, stats::combined_fit_quality")),
      ensemble(&E::linear_fit_pvalue, "/response/linear_fit_pvalue", {"axis", "observable"}, "1",
               "probability of a chi-square at least as large if the response along the "
               "parameter were linear (a small value, below 0.01 say, flags a non-linear "
               "response: read the local slopes); NaN with no degrees of freedom",
               S::sweep, derived("stats::linear_fit_quality per line, stats::combined_fit_quality")),
      ensemble(&E::local_slope, "/response/local_slope", {"axis", "case", "observable"}, "1",
               "derivative of the ensemble time mean along the swept parameter at the case, the "
               "other parameters fixed: second-order central differences (non-uniform spacing "
               "allowed), first-order one-sided at the ends of the axis, as numpy.gradient",
               S::sweep, derived("stats::gradient_along each axis of the cases' time means")),
      ensemble(&E::local_slope_stderr, "/response/local_slope_stderr",
               {"axis", "case", "observable"}, "1",
               "standard error of the local slope, propagated from the cases' "
               "/ensemble/time_mean_stderr, with paired cases (ensemble.pair_with_case) and "
               "their correlation, estimated from up to 64 groups of members (independent cases "
               "otherwise)",
               S::sweep,
               derived("stats::gradient_along each axis of the cases' time means; with paired "
                       "cases stats::group_correlation of the pair groups' sums")),
      ensemble(&E::local_slope_regime, "/response/local_slope_regime", {"axis", "case", "regime"},
               "1",
               "derivative of the ensemble regime fraction along the swept parameter at the "
               "case, the other parameters fixed (as /response/local_slope)",
               S::sweep_regimes,
               derived("stats::gradient_along each axis of the cases' regime fractions")),
      ensemble(&E::local_slope_regime_stderr, "/response/local_slope_regime_stderr",
               {"axis", "case", "regime"}, "1",
               "standard error of the local regime slope, propagated from the cases' standard "
               "errors of the regime fraction (/ensemble/regime_fraction_std / sqrt(valid "
               "members)), with paired cases and their correlation (as "
               "/response/local_slope_stderr)",
               S::sweep_regimes,
               derived("stats::gradient_along each axis of the cases' regime fractions")),
      ensemble(&E::predicted_slope, "/response/predicted_slope", {"forcing_parameter", "case", "observable"},
               "1",
               "derivative of the observable's mean with respect to the additive forcing, "
               "predicted from the case's own fluctuations: the lag integral (trapezoid rule, "
               "lags 0 .. statistics.response.max_lag) of C_Ax(tau) C(0)^-1 applied to the "
               "forcing's direction, C_Ax(tau) the covariance of the observable at t + tau with "
               "the state at t and C(0) the state's covariance (quasi-Gaussian "
               "fluctuation-dissipation relation; NaN if C(0) is singular)",
               S::response,
               derived("stats::predict_response of the cases' summed response_sums")),
      ensemble(&E::predicted_slope_stderr, "/response/predicted_slope_stderr",
               {"forcing_parameter", "case", "observable"}, "1",
               "standard error of the predicted slope: delete-one-group jackknife over the "
               "statistics.response.groups groups of members",
               S::response,
               derived("stats::predict_response of the cases' summed response_sums")),
      // twin experiment
      coordinate("/twins/lead", {"lead"}, T::float64, kTime,
                 "lead time since the end of the spin-up, in model time units", S::twins),
      ensemble(&E::twin_log_separation, "/twins/log_separation", {"case", "lead"}, "1",
               "mean over valid member-twin pairs of the log of their Euclidean separation",
               S::twins, merged(M::moments, "the batches' twin_moments merged along the batch merge tree")),
      ensemble(&E::twin_log_separation_std, "/twins/log_separation_std", {"case", "lead"}, "1",
               "standard deviation of the log separation across the valid pairs", S::twins,
               merged(M::moments, "the batches' twin_moments merged along the batch merge tree")),
      ensemble(&E::twin_pairs, "/twins/pairs", {"case"}, "1",
               "valid member-twin pairs (member and twin finite throughout)", S::twins,
               derived("count of the valid pairs")),
      ensemble(&E::growth_rate, "/twins/growth_rate", {"case"}, kRate,
               "least-squares slope of the mean log separation over its linear phase, per model "
               "time unit",
               S::twins, derived("stats::fit_growth of the mean log separation")),
      ensemble(&E::growth_window, "/twins/growth_window", {"case", "window_edge"}, kTime,
               "first and last lead time of the linear phase the growth rate is fitted over",
               S::twins, derived("stats::fit_growth of the mean log separation")),
      ensemble(&E::growth_note, "/twins/growth_note", {"case"}, "1",
               "why the case has no growth rate (empty when it has one)", S::twins,
               derived("stats::fit_growth of the mean log separation")),
      ensemble(&E::twins_not_separating, "", {"case"}, "1",
               "1 when the twins show no significant sustained rise", S::twins,
               derived("stats::fit_growth of the mean log separation"), "twins_not_separating"),
      ensemble(&E::horizon_median, "/twins/horizon_median", {"case"}, kTime,
               "median horizon of the valid pairs, model time units: the first lead at which "
               "the Kaplan-Meier share of pairs not yet separated is 0.5 or below (pairs never "
               "separated count as censored at the last lead; NaN when half never separated)",
               S::twins, derived_of("horizon_median", Estimate::median, kSurvival)),
      ensemble(&E::horizon_median_ci95, "/twins/horizon_median_ci95", {"case", "bound"}, kTime,
               "95% confidence interval of the median horizon (Brookmeyer-Crowley, Greenwood "
               "standard errors; NaN upper bound: beyond the last lead)",
               S::twins, derived_of("horizon_median", Estimate::ci95, kSurvival)),
      ensemble(&E::unseparated_fraction, "/twins/unseparated_fraction", {"case", "lead"}, "1",
               "Kaplan-Meier share of the valid pairs whose separation has not yet exceeded the "
               "threshold at the lead",
               S::twins, derived(kSurvival)),
      ensemble(&E::suggested_duration, "/twins/suggested_duration", {"case"}, kTime,
               "when fewer than 90% of the pairs separated: the duration by which about 90% "
               "would at the pace so far, from the survival curve (or the growth line when "
               "under 20% separated); NaN when 90% did, when the curve levelled off, or when "
               "neither applies",
               S::twins, derived("stats::time_for_share of the survival curve")),
      // histogram
      coordinate("/histogram/edges", {"edges"}, T::float64, "1", "bin edges of the histogram",
                 S::histogram),
      ensemble(&E::histogram, "/histogram/counts", {"case", "bin"}, "1",
               "member-steps of valid members with the observable in each bin", S::histogram,
               merged(M::sum, "the batches' histogram counts summed per case"),
               "histogram"),
      // snapshots
      ensemble(&E::snapshot_time, "/snapshot/time", {"time"}, kTime,
               "model time of each snapshot, from the start of the integration (spin-up "
               "included)",
               S::snapshots, derived("the plan's snapshot steps times dt")),
      ensemble(&E::snapshot_mean, "/snapshot/mean", {"case", "time", "observable"}, "1",
               "mean of the observable across the case's valid members at the snapshot time",
               S::snapshots, merged(M::moments, "the batches' snapshot_moments merged along the batch merge tree")),
      ensemble(&E::snapshot_variance, "/snapshot/variance", {"case", "time", "observable"}, "1",
               "variance of the observable across the case's valid members at the snapshot "
               "time (n-1 denominator)",
               S::snapshots, merged(M::moments, "the batches' snapshot_moments merged along the batch merge tree")),
      ensemble(&E::snapshot_regime_fraction, "/snapshot/regime_fraction",
               {"case", "time", "regime"}, "1",
               "share of the case's valid members in the regime at the snapshot time",
               S::snapshot_regimes,
               merged(M::sum, "the batches' snapshot_regimes summed per case, over the valid members")),
      // transient response against the paired reference case
      ensemble(&E::transient_time, "/transient/time", {"time"}, kTime,
               "model time of each snapshot, from the start of the integration (as "
               "/snapshot/time)",
               S::paired_snapshots, derived("the plan's snapshot steps times dt")),
      ensemble(&E::transient_response, "/transient/response", {"case", "time", "observable"},
               "1",
               "mean over the members of the difference of each member from the same member of "
               "the reference case (ensemble.pair_with_case) at the snapshot time: the "
               "transient response (exactly 0 for the reference itself)",
               S::paired_snapshots,
               merged(M::moments, "the batches' paired_moments merged along the batch merge tree")),
      ensemble(&E::transient_response_ci95, "/transient/response_ci95",
               {"case", "time", "observable", "bound"}, "1",
               "95% confidence interval of the transient response, from the paired differences "
               "(Student t)",
               S::paired_snapshots,
               derived("response +- t(0.975, n-1) s / sqrt(n), s the std of the paired differences")),
      ensemble(&E::transient_reference_std, "/transient/reference_std", {"time", "observable"},
               "1", "standard deviation across the reference case's members at the snapshot time",
               S::paired_snapshots, derived("square root of the reference case's /snapshot/variance")),
      ensemble(&E::transient_emergence_time, "/transient/emergence_time", {"case", "observable"},
               kTime,
               "time of emergence: the first snapshot time from which the response's 95% "
               "interval excludes 0 at every later snapshot time (NaN if it never does)",
               S::paired_snapshots, derived("from /transient/response_ci95")),
      ensemble(&E::transient_variance_reduction, "/transient/variance_reduction",
               {"case", "observable"}, "1",
               "variance of the paired differences over the sum of the case's and the "
               "reference's variances across members, averaged over the snapshot times (1: "
               "pairing gains nothing, 0: the differences do not vary)",
               S::paired_snapshots,
               derived("mean over snapshot times with a positive denominator")),
      // trajectories
      coordinate("/trajectory/time", {"step"}, T::float64, kTime,
                 "model time of each stored sample", S::trajectories),
      batch("trajectory", &B::trajectory, "/trajectory/state",
            {"case", "sample", "step", "variable"}, "1",
            "full state of the stored members (the first members of each case); the dimension "
            "`variable` runs over the state variables",
            S::trajectories, M::stored),
  };
}

std::vector<Dimension> make_dimensions() {
  return {
      {"case", "1", "case index", {}, "0 .. cases - 1"},
      {"member", "1", "member index within the case", {}, "0 .. members - 1"},
      {"state", "1", "state variable", {}, "the model's state variable names", true},
      {"observable", "1", "observable", {}, "the selected observable names", true},
      {"regime", "1", "regime label", {}, "the regime labels", true},
      {"bound", "1", "bound of the 95% confidence interval", {"lower", "upper"}, "", true},
      {"window_edge", "1", "edge of the lead-time window the growth rate is fitted over",
       {"first", "last"}, "", true},
      {"exponent", "1", "exponent number (1 = leading)", {}, "1 .. exponents", true},
      {"axis", "1", "swept parameter", {}, "the swept parameters' names", true},
      {"forcing_parameter", "1", "parameter that enters as an additive forcing", {},
       "the model's additive forcings' names",
       true},
      {"lead", kTime, "lead time since the end of the spin-up", {},
       "0, every, 2 every, ... (statistics.twins.every)"},
      {"edges", "1", "bin edge of the histogram", {}, "the bins' edges, low to high"},
      {"bin", "1", "bin of the histogram", {}, "the bins' centres"},
      {"time", kTime, "model time of each snapshot, from the start of the integration", {},
       "spinup, spinup + every, ... (statistics.snapshots.every)"},
      {"sample", "1", "member index of the stored member", {}, "0 .. stored members - 1"},
      {"step", "", "sample of a stored trajectory", {},
       "none (each sample's model time is /trajectory/time)"},
      {"variable", "1", "state variable", {}, "the model's state variable names", true},
      {"moment", "1", "(n, mean, m2) of a partial summary (checkpoints only)", {}, "0 .. 2"},
      {"response_group", "1", "group of members of the response sums (checkpoints only)", {},
       "0 .. groups - 1"},
      {"response_sum", "1", "one of the response sums of a group (checkpoints only)", {},
       "stats::LagSumsLayout"},
  };
}

std::string join(const std::vector<std::string>& items) {
  std::string text;
  for (const std::string& item : items) text += (text.empty() ? "" : ", ") + item;
  return text;
}

}  // namespace

bool is_on(Switch s, const Options& o) {
  switch (s) {
    case Switch::always: return true;
    case Switch::sweep: return o.sweep;
    case Switch::regimes: return o.regimes;
    case Switch::lyapunov: return o.lyapunov;
    case Switch::twins: return o.twins;
    case Switch::histogram: return o.histogram;
    case Switch::snapshots: return o.snapshots;
    case Switch::snapshot_regimes: return o.snapshots && o.regimes;
    case Switch::sweep_regimes: return o.sweep && o.regimes;
    case Switch::trajectories: return o.trajectories;
    case Switch::paired_snapshots: return o.paired && o.snapshots;
    case Switch::response: return o.response;
  }
  return false;
}

std::string switch_text(Switch s) {
  switch (s) {
    case Switch::always: return "always";
    case Switch::sweep: return "sweep";
    case Switch::regimes: return "statistics.regimes";
    case Switch::lyapunov: return "statistics.lyapunov";
    case Switch::twins: return "statistics.twins";
    case Switch::histogram: return "statistics.histogram";
    case Switch::snapshots: return "statistics.snapshots";
    case Switch::snapshot_regimes: return "statistics.snapshots and statistics.regimes";
    case Switch::sweep_regimes: return "sweep and statistics.regimes";
    case Switch::trajectories: return "output.trajectories";
    case Switch::paired_snapshots: return "ensemble.pair_with_case and statistics.snapshots";
    case Switch::response: return "statistics.response";
  }
  return "";
}

std::string Quantity::group() const {
  const std::size_t slash = path.find('/', 1);
  return slash == std::string::npos ? "" : path.substr(1, slash - 1);
}

std::string Quantity::leaf() const { return path.substr(path.rfind('/') + 1); }

std::string Quantity::merge_text() const {
  switch (merge) {
    case Merge::none: return "from the plan";
    case Merge::rows: return "per member";
    case Merge::member_moments: return "per member; estimated across the valid members";
    case Merge::sum: return "summed per case";
    case Merge::moments: return how.empty() ? "(n, mean, m2) merged per case along the batch merge tree" : how;
    case Merge::stored: return "as integrated, by the rank that ran the batch";
    case Merge::summed: return "summed per case along the batch merge tree";
    case Merge::estimate: {
      const char* what = estimate == Estimate::mean ? "mean"
                         : estimate == Estimate::std ? "standard deviation"
                         : estimate == Estimate::ci95 ? "95% interval"
                                                      : "statistic";
      return std::string(what) + " of the valid members' " + source +
             ", moments merged per case along the batch merge tree";
    }
    case Merge::derived: return how;
  }
  return how;
}

std::string PerCase::detail_key(const Quantity& detail) const {
  const std::string own = value->leaf(), leaf = detail.leaf();
  return leaf.rfind(own + "_", 0) == 0 ? leaf.substr(own.size() + 1) : leaf;
}

std::vector<PerCase> per_case_results() {
  std::vector<PerCase> out;
  for (const Quantity& q : quantities()) {
    if (q.scope != Scope::ensemble || !q.archived() || q.dims.empty() || q.dims[0] != "case") {
      continue;
    }
    const bool central = q.estimate == Estimate::none || q.estimate == Estimate::mean ||
                         q.estimate == Estimate::median;
    if (central) {
      // a curve (over leads, snapshot times, bins) or a table of more dimensions is not one
      if (q.dims.size() > 2 || (q.dims.size() == 2 && !dimension(q.dims[1]).named)) continue;
      out.push_back(PerCase{&q, nullptr, nullptr, {}});
      continue;
    }
    auto owner = std::find_if(out.begin(), out.end(), [&](const PerCase& p) {
      return p.value->estimate != Estimate::none && p.value->source == q.source;
    });
    if (owner == out.end()) continue;  // describes a curve
    if (q.estimate == Estimate::std) owner->std = &q;
    if (q.estimate == Estimate::ci95) owner->ci95 = &q;
    if (q.estimate == Estimate::detail) owner->details.push_back(&q);
  }
  return out;
}

[[noreturn]] void throw_wrong_array(const Quantity& q) {
  throw std::logic_error("results table: " + q.name + " is not an array of the requested type");
}

const std::vector<Quantity>& quantities() {
  static const std::vector<Quantity> table = make_table();
  return table;
}

const Quantity& at_path(const std::string& path) {
  for (const Quantity& q : quantities()) {
    if (q.path == path) return q;
  }
  if (path.rfind("/case/", 0) == 0) return at_path("/case/<parameter>");
  throw std::logic_error("results table has no dataset " + path);
}

const Quantity& quantity(Scope scope, const std::string& name) {
  for (const Quantity& q : quantities()) {
    if (q.scope == scope && q.name == name) return q;
  }
  throw std::logic_error("results table has no quantity " + name);
}

const std::vector<Dimension>& dimensions() {
  static const std::vector<Dimension> table = make_dimensions();
  return table;
}

const Dimension& dimension(const std::string& name) {
  for (const Dimension& d : dimensions()) {
    if (d.name == name) return d;
  }
  throw std::logic_error("results table has no dimension " + name);
}

std::string markdown_table() {
  std::string text =
      "| path | dimensions | units | content | present | merged |\n|---|---|---|---|---|---|\n";
  for (const Quantity& q : quantities()) {
    if (!q.archived()) continue;
    text += "| `" + q.path + "` | " + join(q.dims) + " | " + q.units + " | " + q.long_name +
            " | " + switch_text(q.when) + " | " + q.merge_text() + " |\n";
  }
  text += "\n| dimension | units | meaning | coordinate values |\n|---|---|---|---|\n";
  for (const Dimension& d : dimensions()) {
    if (d.name == "moment" || d.name == "response_group" || d.name == "response_sum") {
      continue;  // checkpoints only
    }
    std::string values = d.coordinates;
    for (const std::string& label : d.labels) {
      values += (values.empty() ? "" : ", ") + ("`" + label + "`");
    }
    text += "| `" + d.name + "` | " + (d.units.empty() ? "-" : d.units) + " | " + d.long_name +
            " | " + values + " |\n";
  }
  return text;
}

namespace {

const char* type_text(ElementType t) {
  switch (t) {
    case ElementType::float64: return "float64";
    case ElementType::int64: return "int64";
    case ElementType::uint8: return "uint8";
    case ElementType::text: return "text";
  }
  return "";
}

const char* scope_text(Scope s) {
  switch (s) {
    case Scope::coordinate: return "coordinate";
    case Scope::member: return "member";
    case Scope::batch: return "batch";
    case Scope::ensemble: return "ensemble";
  }
  return "";
}

}  // namespace

std::string json_table() {
  using Json = nlohmann::ordered_json;
  Json doc{{"quantities", Json::array()}, {"dimensions", Json::array()}};
  for (const Quantity& q : quantities()) {
    doc["quantities"].push_back(Json{{"name", q.name}, {"path", q.path}, {"dims", q.dims},
                                     {"type", type_text(q.type)}, {"units", q.units},
                                     {"long_name", q.long_name}, {"scope", scope_text(q.scope)},
                                     {"present", switch_text(q.when)},
                                     {"merged", q.merge_text()}});
  }
  for (const Dimension& d : dimensions()) {
    doc["dimensions"].push_back(Json{{"name", d.name}, {"units", d.units},
                                     {"long_name", d.long_name}, {"labels", d.labels}});
  }
  return doc.dump(1) + "\n";
}

}  // namespace chaosweep::results
