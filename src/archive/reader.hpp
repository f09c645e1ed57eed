// Reads the ensemble part of an archive back (for `chaosweep summary` and tests). Serial.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace chaosweep::archive {

struct ArchiveSummary {
  std::string path;
  std::string title;
  std::string campaign;
  std::string model;
  std::string status;
  std::string scheduled_parameter;  // the parameter that follows a schedule, or empty
  std::string tool_version;
  std::string created_utc;
  std::string spec_sha256;
  int format_version = 0;
  std::int64_t ranks = 0;
  std::int64_t cases = 0;
  std::int64_t members = 0;                      // per case
  std::vector<std::string> axes;                 // swept parameters
  std::vector<std::vector<double>> axis_values;  // [axis][case]
  std::vector<std::string> observables;
  std::vector<std::string> regimes;
  std::vector<std::int64_t> valid_members;       // [case]
  std::vector<double> effective_members;         // [case]
  std::vector<double> time_mean, time_mean_std;  // [case][observable]
  std::vector<double> time_mean_ci95;            // [case][observable][2]
  // standard error of the ensemble mean, effective samples, decorrelation time (empty in
  // archives written before they existed)
  std::vector<double> time_mean_stderr, effective_samples, decorrelation_time;  // [case][obs]
  // non-chaotic cases (empty in archives written before the check existed)
  std::vector<std::uint8_t> non_chaotic;         // [case]
  std::vector<std::string> non_chaotic_reason;   // [case]
  std::vector<double> regime_fraction, regime_fraction_std;  // [case][regime]
  std::vector<double> regime_fraction_ci95;                  // [case][regime][2]
  std::vector<double> slope, slope_stderr;       // [axis][observable]
  int exponents = 0;                             // Lyapunov exponents per member (0: none)
  std::vector<double> lyapunov, lyapunov_std;    // [case][exponent]
  std::vector<double> lyapunov_ci95;             // [case][exponent][2]
  bool twins = false;                            // the archive has a twin experiment
  std::vector<double> horizon, horizon_std;      // [case], model time units
  std::vector<double> horizon_ci95;              // [case][2]
  std::vector<std::int64_t> horizon_reached;     // [case]
  std::vector<std::int64_t> twin_pairs;          // [case]
  std::vector<double> growth_rate;               // [case], per model time unit
  std::vector<double> growth_window;             // [case][2], model time units
  // (empty in archives written before they existed)
  std::vector<std::string> growth_note;          // [case], why there is no growth rate
  std::vector<double> horizon_median;            // [case], Kaplan-Meier median
  std::vector<double> horizon_median_ci95;       // [case][2]
  std::vector<double> suggested_duration;        // [case]
  std::vector<double> snapshot_time;             // [time] (empty: no snapshots)
  std::vector<double> snapshot_mean, snapshot_variance;  // [case][time][observable]
};

/// Reads `path`. A missing file, a file that is not an HDF5 archive of this tool, a truncated,
/// damaged or edited one (its seal, archive/seal.hpp, disagrees with its content) or one of a
/// newer format version throws UsageError with a one-line message. With `verify` false the
/// seal's size and digest are not checked (an edited archive is read; a damaged one may crash
/// inside HDF5).
ArchiveSummary read_summary(const std::string& path, bool verify = true);

}  // namespace chaosweep::archive
