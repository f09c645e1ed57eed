// What one batch of members produced: per-member rows and per-batch partial summaries.
// Every array here is declared once in results/table.hpp (its name, archive path, dimensions,
// units, merge and when it is present); the checkpoint record, the reduction and the archive
// writer reach the arrays through that table. Pure: no MPI, no HDF5, no YAML.
#pragma once

#include <cstdint>
#include <vector>

namespace chaosweep::results {

/// Per-member status codes (archive /member/status).
enum MemberStatus : std::uint8_t { kValid = 0, kNonFinite = 1 };

/// Everything one batch produced, for its `count` real members (padding dropped). Per-member
/// arrays are member-major, [count][...]; the meaning of each is its table entry.
struct BatchResult {
  // identity of the batch (not results: they place the rows)
  std::int64_t batch_index = 0;
  std::int64_t case_index = 0;
  std::int64_t first_member = 0;
  int count = 0;
  int trajectory_members = 0;  // members of this batch among the stored ones

  // per member, [count][...]
  std::vector<double> initial_state;
  std::vector<std::uint8_t> status;
  std::vector<double> time_mean;
  std::vector<double> time_variance;
  std::vector<double> time_mean_stderr;
  std::vector<double> time_mean_tau;
  std::vector<double> time_mean_samples;
  std::vector<double> extreme_min;
  std::vector<double> extreme_max;
  std::vector<double> extreme_min_time;
  std::vector<double> extreme_max_time;
  std::vector<double> regime_fraction;
  std::vector<double> regime_mean_residence;
  std::vector<std::int64_t> regime_transitions;
  std::vector<double> lyapunov;
  std::vector<double> spread;
  std::vector<double> horizon;

  // per batch, summaries over its valid members
  std::vector<std::int64_t> histogram;         // [bins]
  std::vector<double> trajectory;              // [stored members][samples][state_dim]
  std::vector<double> twin_moments;            // [leads][3]: n, mean, m2
  std::vector<double> snapshot_moments;        // [snapshots][observables][3]: n, mean, m2
  std::vector<std::int64_t> snapshot_regimes;  // [snapshots][regimes]
  std::vector<double> paired_moments;  // [snapshots][observables][3]: of the paired differences
  std::vector<double> response_sums;   // [response groups][stats::LagSumsLayout width]

  // What the reduction takes of the batch (parallel/batch_summary.hpp), once summarised; then
  // the per-member rows may hold only the archived members, the first `rows` of the batch.
  std::vector<double> summary;
  std::vector<std::int64_t> summary_counts;
};

}  // namespace chaosweep::results
