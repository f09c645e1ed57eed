// The campaign's ensemble estimates, identical on every rank after the reduction. Every array
// is declared once in results/table.hpp (archive path, dimensions, units, how it is derived,
// when it is present); the archive writer and reader reach them through that table.
// Pure: no MPI, no HDF5, no YAML.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace chaosweep::results {

struct EnsembleResults {
  // per case: members and time means
  std::vector<std::int64_t> valid_members;
  std::vector<double> effective_members;
  std::vector<double> time_mean;
  std::vector<double> time_mean_std;
  std::vector<double> time_mean_ci95;
  std::vector<double> time_mean_stderr;
  std::vector<double> effective_samples;
  std::vector<double> decorrelation_time;
  std::vector<double> member_stderr_rms;
  std::vector<double> member_time_variance;
  std::vector<std::uint8_t> non_chaotic;
  std::vector<std::string> non_chaotic_reason;
  // regimes and Lyapunov exponents
  std::vector<double> regime_fraction;
  std::vector<double> regime_fraction_std;
  std::vector<double> regime_fraction_ci95;
  std::vector<double> regime_mean_residence;
  std::vector<double> regime_mean_residence_std;
  std::vector<double> regime_mean_residence_ci95;
  std::vector<double> lyapunov;
  std::vector<double> lyapunov_std;
  std::vector<double> lyapunov_ci95;
  // twin experiment
  std::vector<double> horizon;
  std::vector<double> horizon_std;
  std::vector<double> horizon_ci95;
  std::vector<std::int64_t> horizon_reached;
  std::vector<double> twin_log_separation;
  std::vector<double> twin_log_separation_std;
  std::vector<std::int64_t> twin_pairs;
  std::vector<double> growth_rate;
  std::vector<double> growth_window;
  std::vector<std::string> growth_note;
  std::vector<std::uint8_t> twins_not_separating;
  std::vector<double> horizon_median;
  std::vector<double> horizon_median_ci95;
  std::vector<double> unseparated_fraction;
  std::vector<double> suggested_duration;
  // response to the sweep, histogram, snapshots
  std::vector<double> slope;
  std::vector<double> slope_stderr;
  std::vector<double> linear_fit_chi2;           // [axis][observable]
  std::vector<std::int64_t> linear_fit_dof;      // [axis][observable]
  std::vector<double> linear_fit_pvalue;         // [axis][observable]
  std::vector<double> local_slope;
  std::vector<double> local_slope_stderr;
  std::vector<double> local_slope_regime;
  std::vector<double> local_slope_regime_stderr;
  std::vector<std::int64_t> histogram;
  std::vector<double> snapshot_time;
  std::vector<double> snapshot_mean;
  std::vector<double> snapshot_variance;
  std::vector<double> snapshot_regime_fraction;
  std::vector<double> transient_time;                // [time], as snapshot_time
  std::vector<double> transient_response;            // [case][time][observable]
  std::vector<double> transient_response_ci95;       // [case][time][observable][2]
  std::vector<double> transient_reference_std;       // [time][observable]
  std::vector<double> transient_emergence_time;      // [case][observable]
  std::vector<double> transient_variance_reduction;  // [case][observable]
  std::vector<double> predicted_slope;         // [forcing][case][observable]
  std::vector<double> predicted_slope_stderr;  // [forcing][case][observable]

  /// Members that became non-finite, over the whole campaign (for the run log).
  std::int64_t non_finite_members = 0;
};

}  // namespace chaosweep::results
