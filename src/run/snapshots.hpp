// Internal to run/: the ensemble snapshots of one batch (statistics.snapshots).
// Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// At each snapshot time (step spinup_steps + k * snapshot_every, k = 0 .. snapshot_count - 1)
// the recorder keeps, for each real member j of the batch, the value of every selected
// observable and the member's regime:
//   values  [k][o][j]   (snapshot_count x observables x count doubles)
//   regime  [k][j]      (when regimes are configured)
// A member's status is final only when the batch finishes (it may become non-finite after a
// snapshot), so the values are kept per member and summarised at the end over the members
// that stayed finite, in member order:
//   moments [k][o] = (n, mean, m2) by Welford's update (stats::Moments::add),
//   counts  [k][r] = members in regime r.
// Batches are merged in plan order by the reduction (Chan's update), so the across-member
// statistics are bitwise the same on any number of ranks; the arrays are part of the batch
// state, so a resumed batch gives the same bits as an uninterrupted one.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "models/model.hpp"
#include "run/batch_runner.hpp"
#include "stats/saved_state.hpp"

namespace chaosweep::run {

struct Setup;

class SnapshotRecorder {
 public:
  /// A batch of `count` real members (columns 0 .. count-1 of the state).
  SnapshotRecorder(const Setup& setup, const models::Model& model, int count);

  /// Snapshot k (0 .. snapshot_count - 1) of the batch state x ([state_dim][width]).
  void record(std::int64_t k, const double* x);

  void save(const std::string& prefix, stats::SavedState& out) const;
  void load(const std::string& prefix, stats::SavedStateReader& in);

  /// Fills out.snapshot_moments ([k][o][3]: n, mean, m2) and out.snapshot_regimes ([k][r]) from
  /// the members whose flag in non_finite ([width]) is 0.
  void collect(const std::vector<std::uint8_t>& non_finite, BatchResult& out) const;

  /// Fills out.paired_moments ([k][o][3]) with the moments of this batch's values less the
  /// paired reference's (`reference`, the same members integrated with the reference case's
  /// parameters; null: the batch is the reference, every difference exactly 0) over the
  /// members valid in both.
  void collect_paired(const std::vector<std::uint8_t>& non_finite,
                      const SnapshotRecorder* reference,
                      const std::vector<std::uint8_t>* reference_non_finite,
                      BatchResult& out) const;

 private:
  const Setup& setup_;
  const models::Model& model_;
  int count_;
  int n_obs_;
  std::vector<double> derived_;            // [derived observables][width], scratch
  std::vector<int> regime_scratch_;        // [width]
  std::vector<double> values_;             // [snapshots][observables][count]
  std::vector<std::int64_t> regime_;       // [snapshots][count] (empty without regimes)
};

}  // namespace chaosweep::run
