// Reads the ensemble part of an archive back (for `chaosweep summary` and tests). Serial.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "results/ensemble_results.hpp"

namespace chaosweep::archive {

/// The archive's identity and its ensemble results: every ensemble quantity of the table it
/// holds (results/table.hpp; archives of earlier versions lack some, left empty).
struct ArchiveSummary : results::EnsembleResults {
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
  std::int64_t pair_groups = 0;  // groups behind paired cases' local-slope errors (0: unpaired)
  std::vector<std::string> axes;                 // swept parameters
  std::vector<std::vector<double>> axis_values;  // [axis][case]
  std::vector<std::string> forcings;  // additive forcings of /response/predicted_slope
  std::vector<std::string> observables;
  std::vector<std::string> regimes;
  int exponents = 0;                             // Lyapunov exponents per member (0: none)
  bool twins = false;                            // the archive has a twin experiment
};

/// Reads `path`. A missing file, a file that is not an HDF5 archive of this tool, a truncated,
/// damaged or edited one (its seal, archive/seal.hpp, disagrees with its content) or one of a
/// newer format version throws UsageError with a one-line message. With `verify` false the
/// seal's size and digest are not checked (an edited archive is read; a damaged one may crash
/// inside HDF5).
ArchiveSummary read_summary(const std::string& path, bool verify = true);

}  // namespace chaosweep::archive
