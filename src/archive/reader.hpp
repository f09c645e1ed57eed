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
  std::vector<double> regime_fraction, regime_fraction_std;  // [case][regime]
  std::vector<double> regime_fraction_ci95;                  // [case][regime][2]
  std::vector<double> slope, slope_stderr;       // [axis][observable]
  int exponents = 0;                             // Lyapunov exponents per member (0: none)
  std::vector<double> lyapunov, lyapunov_std;    // [case][exponent]
  std::vector<double> lyapunov_ci95;             // [case][exponent][2]
  std::vector<double> snapshot_time;             // [time] (empty: no snapshots)
  std::vector<double> snapshot_mean, snapshot_variance;  // [case][time][observable]
};

/// Reads `path`. A missing file, a file that is not an HDF5 archive of this tool, a truncated
/// one or one of a newer format version throws UsageError with a one-line message.
ArchiveSummary read_summary(const std::string& path);

}  // namespace chaosweep::archive
