// Reduction of per-batch results into per-case ensemble estimates, identical on every rank.
//
// Each rank summarises its own batches (moments across the batch's valid members, histogram
// counts); the summaries are gathered in batch order and every rank merges them per case in
// that order. The merge order is therefore fixed by the plan, not by the rank count, and the
// estimates are bitwise the same for any number of ranks.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "parallel/communicator.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"

namespace chaosweep::parallel {

struct EnsembleResults {
  std::vector<std::int64_t> valid_members;      // [case]
  std::vector<double> effective_members;        // [case]
  std::vector<double> time_mean;                // [case][observable]
  std::vector<double> time_mean_std;            // [case][observable]
  std::vector<double> time_mean_ci95;           // [case][observable][2], from time_mean_stderr
  std::vector<double> regime_fraction;          // [case][regime]
  std::vector<double> regime_fraction_std;      // [case][regime]
  std::vector<double> regime_fraction_ci95;     // [case][regime][2]
  std::vector<std::int64_t> histogram;          // [case][bin]
  std::vector<double> lyapunov;                 // [case][exponent] (when requested)
  std::vector<double> lyapunov_std;             // [case][exponent]
  std::vector<double> lyapunov_ci95;            // [case][exponent][2]
  // standard error of the ensemble time mean (stats::ensemble_mean_stderr), effective
  // independent time samples (sum of the valid members' n_eff), mean decorrelation time
  std::vector<double> time_mean_stderr;         // [case][observable]
  std::vector<double> effective_samples;        // [case][observable]
  std::vector<double> decorrelation_time;       // [case][observable], model time units
  // sqrt of the mean of the valid members' stderr^2 and the mean of their time variances
  std::vector<double> member_stderr_rms;        // [case][observable] (not archived)
  std::vector<double> member_time_variance;     // [case][observable] (not archived)
  // Non-chaotic cases (stats/dynamics_check.hpp): 1 when flagged, with the reasons
  std::vector<std::uint8_t> non_chaotic;        // [case]
  std::vector<std::string> non_chaotic_reason;  // [case], "" when not flagged
  // Twin experiment (statistics.twins; empty otherwise), see parallel/reduce_twins.cpp.
  std::vector<double> twin_log_separation;      // [case][lead], mean over valid pairs
  std::vector<double> twin_log_separation_std;  // [case][lead], across valid pairs
  std::vector<std::int64_t> twin_pairs;         // [case], valid member-twin pairs
  std::vector<double> growth_rate;              // [case], per time unit
  std::vector<double> growth_window;            // [case][2], first and last lead of the fit
  std::vector<std::string> growth_note;         // [case], why there is no rate ("" if fitted)
  std::vector<std::uint8_t> twins_not_separating;  // [case], no significant sustained rise
  std::vector<double> horizon;                  // [case], mean over members that reached it
  std::vector<double> horizon_std;              // [case]
  std::vector<double> horizon_ci95;             // [case][2]
  std::vector<std::int64_t> horizon_reached;    // [case], members with a finite horizon
  // Survival of the valid pairs (stats/survival.hpp), unseparated pairs censored at the
  // last lead
  std::vector<double> horizon_median;           // [case], NaN when half never separated
  std::vector<double> horizon_median_ci95;      // [case][2]
  std::vector<double> unseparated_fraction;     // [case][lead]
  std::vector<double> suggested_duration;       // [case], when fewer than kMostPairs separated
  std::vector<double> slope;                    // [axis][observable]
  std::vector<double> slope_stderr;             // [axis][observable]
  std::int64_t non_finite_members = 0;          // over the whole campaign
  // statistics.snapshots: across the valid members at each snapshot time
  std::vector<double> snapshot_time;            // [time], model time units from t = 0
  std::vector<double> snapshot_mean;            // [case][time][observable]
  std::vector<double> snapshot_variance;        // [case][time][observable] (n-1 denominator)
  std::vector<double> snapshot_regime_fraction; // [case][time][regime]
};

/// Share of the twin pairs that should separate within the window (below it, a warning and
/// /twins/suggested_duration).
constexpr double kMostPairs = 0.9;

/// Reduces the batches this rank ran (`local`, in batch order, a contiguous share of the plan's
/// batches) into campaign-wide estimates on every rank. Collective.
EnsembleResults reduce(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                       const std::vector<run::BatchResult>& local);

/// The twin part of reduce() (fills the twin fields of `r`; nothing without twins). Collective.
void reduce_twins(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                  const std::vector<run::BatchResult>& local, EnsembleResults& r);
/// The snapshot part of reduce() (snapshot_reduce.cpp): the batches' per-snapshot moments and
/// regime counts merged per case in batch order. Collective; nothing when there are none.
void reduce_snapshots(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                      const std::vector<run::BatchResult>& local, EnsembleResults& r);

}  // namespace chaosweep::parallel
