// The archive schema tables (see schema.hpp). All models here are non-dimensional: every state
// variable is in the model's own scale, hence units "1"; times are in the model's own time
// unit (kModelTime) and rates per that unit (kPerModelTime).
#include "archive/schema.hpp"

#include <stdexcept>

namespace chaosweep::archive {
namespace {

using T = ElementType;
constexpr const char* kTime = kModelTime;
constexpr const char* kRate = kPerModelTime;

std::vector<DatasetDef> make_table() {
  return {
      {"/observable", {"observable"}, T::text, "1", "name of each observable", "always"},
      {"/case/case", {"case"}, T::int64, "1", "case index (point of the sweep grid)", "always"},
      {"/case/<parameter>", {"case"}, T::float64, "1", "swept value of this model parameter",
       "sweep"},
      {"/member/initial_state", {"case", "member", "state"}, T::float64, "1",
       "state the member started from (after the base spin-up and perturbation)", "always"},
      {"/member/status", {"case", "member"}, T::uint8, "1",
       "member status: 0 valid, 1 non-finite (excluded from every estimate)", "always"},
      {"/member/time_mean", {"case", "member", "observable"}, T::float64, "1",
       "time mean of the observable over the accumulation window", "always"},
      {"/member/time_variance", {"case", "member", "observable"}, T::float64, "1",
       "time variance of the observable over the accumulation window (n-1 denominator)",
       "always"},
      {"/member/time_mean_stderr", {"case", "member", "observable"}, T::float64, "1",
       "standard error of the time mean allowing for autocorrelation (blocking estimate; NaN "
       "for invalid members and for windows shorter than 16 blocks of 256 steps)",
       "always"},
      {"/member/regime_fraction", {"case", "member", "regime"}, T::float64, "1",
       "share of accumulated steps spent in the regime", "statistics.regimes"},
      {"/member/regime_mean_residence", {"case", "member", "regime"}, T::float64, kTime,
       "mean length of an episode in the regime, in model time units (NaN if never visited)",
       "statistics.regimes"},
      {"/member/regime_transitions", {"case", "member"}, T::int64, "1",
       "number of regime changes during accumulation", "statistics.regimes"},
      {"/member/lyapunov", {"case", "member", "exponent"}, T::float64, kRate,
       "leading Lyapunov exponents, per model time unit, in descending order (NaN if the "
       "member became non-finite)",
       "statistics.lyapunov"},
      {"/member/spread", {"case", "member"}, T::float64, "1",
       "attractor spread of the member: root of the summed variances of its state variables "
       "over the twin lead times (NaN if its twin pair is not valid)",
       "statistics.twins"},
      {"/member/horizon", {"case", "member"}, T::float64, kTime,
       "first lead time, in model time units, at which the twin separation exceeds threshold "
       "times the spread (NaN if never or if the pair is not valid)",
       "statistics.twins"},
      {"/ensemble/time_mean", {"case", "observable"}, T::float64, "1",
       "ensemble mean of the members' time means", "always"},
      {"/ensemble/time_mean_std", {"case", "observable"}, T::float64, "1",
       "standard deviation of the members' time means across members", "always"},
      {"/ensemble/time_mean_ci95", {"case", "observable", "bound"}, T::float64, "1",
       "95% confidence interval of the ensemble mean (Student t)", "always"},
      {"/ensemble/regime_fraction", {"case", "regime"}, T::float64, "1",
       "ensemble mean of the members' regime fractions", "statistics.regimes"},
      {"/ensemble/regime_fraction_std", {"case", "regime"}, T::float64, "1",
       "standard deviation of the regime fraction across members", "statistics.regimes"},
      {"/ensemble/regime_fraction_ci95", {"case", "regime", "bound"}, T::float64, "1",
       "95% confidence interval of the ensemble-mean regime fraction (Student t)",
       "statistics.regimes"},
      {"/ensemble/lyapunov", {"case", "exponent"}, T::float64, kRate,
       "ensemble mean of the members' Lyapunov exponents, per model time unit",
       "statistics.lyapunov"},
      {"/ensemble/lyapunov_std", {"case", "exponent"}, T::float64, kRate,
       "standard deviation of the Lyapunov exponents across members", "statistics.lyapunov"},
      {"/ensemble/lyapunov_ci95", {"case", "exponent", "bound"}, T::float64, kRate,
       "95% confidence interval of the ensemble-mean Lyapunov exponent (Student t)",
       "statistics.lyapunov"},
      {"/ensemble/horizon", {"case"}, T::float64, kTime,
       "mean horizon over the valid members that reached the threshold, model time units",
       "statistics.twins"},
      {"/ensemble/horizon_std", {"case"}, T::float64, kTime,
       "standard deviation of the horizon across the members that reached the threshold",
       "statistics.twins"},
      {"/ensemble/horizon_ci95", {"case", "bound"}, T::float64, kTime,
       "95% confidence interval of the mean horizon (Student t)", "statistics.twins"},
      {"/ensemble/horizon_reached", {"case"}, T::int64, "1",
       "valid members whose twin separation exceeded the threshold", "statistics.twins"},
      {"/ensemble/valid_members", {"case"}, T::int64, "1",
       "members with finite states throughout", "always"},
      {"/ensemble/effective_members", {"case"}, T::float64, "1",
       "independent members behind each ensemble estimate: the valid members (independent "
       "by construction)", "always"},
      {"/ensemble/time_mean_stderr", {"case", "observable"}, T::float64, "1",
       "standard error of the ensemble time mean: the larger of the across-member standard "
       "deviation / sqrt(valid members) and sqrt(sum of member standard errors^2) / valid "
       "members", "always"},
      {"/ensemble/effective_samples", {"case", "observable"}, T::float64, "1",
       "independent time samples behind the ensemble time mean: sum over valid members of "
       "n / (2 tau_int)", "always"},
      {"/ensemble/decorrelation_time", {"case", "observable"}, T::float64, kTime,
       "ensemble mean of the members' integrated autocorrelation times tau_int, in model "
       "time units", "always"},
      {"/ensemble/non_chaotic", {"case"}, T::uint8, "1",
       "1 when the case does not behave chaotically (leading Lyapunov exponent below "
       "max(0.01, 2/duration), members settled on fixed points, members' time means "
       "coinciding, or twins not separating), else 0; the attribute reason lists the flagged "
       "cases",
       "always"},
      {"/ensemble/non_chaotic_reason", {"case"}, T::text, "1",
       "why the case is flagged non-chaotic (empty when it is not)", "always"},
      {"/response/slope", {"axis", "observable"}, T::float64, "1",
       "least-squares slope of the ensemble time mean against the swept parameter", "sweep"},
      {"/response/slope_stderr", {"axis", "observable"}, T::float64, "1",
       "standard error of the slope, propagated from each case's /ensemble/time_mean_stderr",
       "sweep"},
      {"/twins/lead", {"lead"}, T::float64, kTime,
       "lead time since the end of the spin-up, in model time units", "statistics.twins"},
      {"/twins/log_separation", {"case", "lead"}, T::float64, "1",
       "mean over valid member-twin pairs of the log of their Euclidean separation",
       "statistics.twins"},
      {"/twins/log_separation_std", {"case", "lead"}, T::float64, "1",
       "standard deviation of the log separation across the valid pairs", "statistics.twins"},
      {"/twins/pairs", {"case"}, T::int64, "1",
       "valid member-twin pairs (member and twin finite throughout)", "statistics.twins"},
      {"/twins/growth_rate", {"case"}, T::float64, kRate,
       "least-squares slope of the mean log separation over its linear phase, per model time "
       "unit",
       "statistics.twins"},
      {"/twins/growth_window", {"case", "window_edge"}, T::float64, kTime,
       "first and last lead time of the linear phase the growth rate is fitted over",
       "statistics.twins"},
      {"/twins/growth_note", {"case"}, T::text, "1",
       "why the case has no growth rate (empty when it has one)", "statistics.twins"},
      {"/twins/horizon_median", {"case"}, T::float64, kTime,
       "median horizon of the valid pairs, model time units: the first lead at which the "
       "Kaplan-Meier share of pairs not yet separated is 0.5 or below (pairs never separated "
       "count as censored at the last lead; NaN when half never separated)",
       "statistics.twins"},
      {"/twins/horizon_median_ci95", {"case", "bound"}, T::float64, kTime,
       "95% confidence interval of the median horizon (Brookmeyer-Crowley, Greenwood standard "
       "errors; NaN upper bound: beyond the last lead)",
       "statistics.twins"},
      {"/twins/unseparated_fraction", {"case", "lead"}, T::float64, "1",
       "Kaplan-Meier share of the valid pairs whose separation has not yet exceeded the "
       "threshold at the lead",
       "statistics.twins"},
      {"/twins/suggested_duration", {"case"}, T::float64, kTime,
       "when fewer than 90% of the pairs separated: the duration by which about 90% would at "
       "the pace so far, from the survival curve (or the growth line when under 20% "
       "separated); NaN when 90% did, when the curve levelled off, or when neither applies",
       "statistics.twins"},
      {"/histogram/edges", {"edges"}, T::float64, "1", "bin edges of the histogram",
       "statistics.histogram"},
      {"/histogram/counts", {"case", "bin"}, T::int64, "1",
       "member-steps of valid members with the observable in each bin",
       "statistics.histogram"},
      {"/snapshot/time", {"time"}, T::float64, kTime,
       "model time of each snapshot, from the start of the integration (spin-up included)",
       "statistics.snapshots"},
      {"/snapshot/mean", {"case", "time", "observable"}, T::float64, "1",
       "mean of the observable across the case's valid members at the snapshot time",
       "statistics.snapshots"},
      {"/snapshot/variance", {"case", "time", "observable"}, T::float64, "1",
       "variance of the observable across the case's valid members at the snapshot time "
       "(n-1 denominator)",
       "statistics.snapshots"},
      {"/snapshot/regime_fraction", {"case", "time", "regime"}, T::float64, "1",
       "share of the case's valid members in the regime at the snapshot time",
       "statistics.snapshots and statistics.regimes"},
      {"/trajectory/time", {"step"}, T::float64, kTime, "model time of each stored sample",
       "output.trajectories"},
      {"/trajectory/state", {"case", "sample", "step", "variable"}, T::float64, "1",
       "full state of the stored members (the first members of each case); the dimension `variable` runs over the state variables",
       "output.trajectories"},
  };
}

std::vector<DimensionDef> make_dimensions() {
  return {
      {"case", "1", "case index (point of the sweep grid)", {}, "0 .. cases - 1"},
      {"member", "1", "member index within the case", {}, "0 .. members - 1"},
      {"state", "1", "state variable", {}, "the model's state variable names"},
      {"observable", "1", "observable", {}, "the selected observable names"},
      {"regime", "1", "regime label", {}, "the regime labels"},
      {"bound", "1", "bound of the 95% confidence interval", {"lower", "upper"}, ""},
      {"window_edge", "1", "edge of the lead-time window the growth rate is fitted over",
       {"first", "last"}, ""},
      {"exponent", "1", "exponent number (1 = leading)", {}, "1 .. exponents"},
      {"axis", "1", "swept parameter", {}, "the swept parameters' names"},
      {"lead", kTime, "lead time since the end of the spin-up", {},
       "0, every, 2 every, ... (statistics.twins.every)"},
      {"edges", "1", "bin edge of the histogram", {}, "the bins' edges, low to high"},
      {"bin", "1", "bin of the histogram", {}, "the bins' centres"},
      {"time", kTime, "model time of each snapshot, from the start of the integration", {},
       "spinup, spinup + every, ... (statistics.snapshots.every)"},
      {"sample", "1", "member index of the stored member", {}, "0 .. stored members - 1"},
      {"step", "", "sample of a stored trajectory", {},
       "none (each sample's model time is /trajectory/time)"},
      {"variable", "1", "state variable", {}, "the model's state variable names"},
  };
}

std::string dims_text(const DatasetDef& d) {
  std::string text;
  for (const std::string& dim : d.dims) text += (text.empty() ? "" : ", ") + dim;
  return text;
}

}  // namespace

const std::vector<DatasetDef>& datasets() {
  static const std::vector<DatasetDef> table = make_table();
  return table;
}

const std::vector<DimensionDef>& dimensions() {
  static const std::vector<DimensionDef> table = make_dimensions();
  return table;
}

const DimensionDef& dimension(const std::string& name) {
  for (const DimensionDef& d : dimensions()) {
    if (d.name == name) return d;
  }
  throw std::logic_error("archive schema has no dimension " + name);
}

const DatasetDef& dataset(const std::string& path) {
  for (const DatasetDef& d : datasets()) {
    if (d.path == path) return d;
  }
  if (path.rfind("/case/", 0) == 0) return dataset("/case/<parameter>");
  throw std::logic_error("archive schema has no dataset " + path);
}

std::string markdown_table() {
  std::string text = "| path | dimensions | units | content | present |\n|---|---|---|---|---|\n";
  for (const DatasetDef& d : datasets()) {
    text += "| `" + d.path + "` | " + dims_text(d) + " | " + d.units + " | " + d.long_name +
            " | " + d.present + " |\n";
  }
  text += "\n| dimension | units | meaning | coordinate values |\n|---|---|---|---|\n";
  for (const DimensionDef& d : dimensions()) {
    std::string values = d.coordinates;
    for (const std::string& label : d.labels) {
      values += (values.empty() ? "" : ", ") + ("`" + label + "`");
    }
    text += "| `" + d.name + "` | " + (d.units.empty() ? "-" : d.units) + " | " + d.long_name +
            " | " + values + " |\n";
  }
  return text;
}

}  // namespace chaosweep::archive
