// This rank's share of a campaign: its batches, the results of those finished, the batch in
// progress, and their checkpoints. Pure of MPI: the caller runs the collective rounds.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "checkpoint/store.hpp"
#include "core/error.hpp"
#include "parallel/batch_summary.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"

namespace chaosweep::app {

/// The one-line spec error for case `c` whose spin-up to the attractor diverged: it names the
/// case, its swept values and dt, at integration.dt's position in the spec (exit status 2).
SpecError spinup_error(const spec::Spec& spec, const plan::Case& c, const run::SpinupDiverged& e);

class LocalWork {
 public:
  /// `store` may be null (no checkpoints). The batches are plan.batch(i) for i in
  /// [share.first, share.last).
  LocalWork(const spec::Spec& spec, const plan::Plan& plan, plan::Range share,
            const checkpoint::Store* store);

  /// Restores what the checkpoints hold for this rank's batches: finished results, and the
  /// newest sound state of a batch in progress. Problems of this rank's batches (damaged
  /// records and files) are logged as warnings and counted; such batches are recomputed,
  /// which gives the same numbers. Damage found in the segments' record headers belongs to no
  /// known batch and is the same on every rank: it is returned for the caller to report once.
  struct Restored {
    std::int64_t finished = 0, in_progress = 0, problems = 0;
    std::vector<std::string> segment_problems;  // damaged headers, records of another spec
    std::vector<std::string> cut_short;         // segments whose last record was cut short
  };
  Restored restore();
  /// The same with the finished-batch index of this rank's batches given (made by the caller,
  /// app/resume_index.hpp, without every rank reading every segment); the damage in `done`
  /// is returned as found.
  Restored restore(checkpoint::DoneIndex done);

  /// Computes the base state of every case that has a batch of this rank still to integrate
  /// (with `from: attractor`, its spin-up), so that a spin-up that diverges stops the run
  /// before it creates any file. Throws SpecError at integration.dt naming the case and its
  /// swept values.
  void prepare_cases();

  /// Integrates for about `seconds` of wall time (at least one chunk), saving each batch that
  /// finishes. Returns true when every batch of this rank is finished.
  bool work(double seconds);
  bool done() const;

  /// Saves the batch in progress (if any) into generation `generation`; returns its index or -1.
  std::int64_t save_in_progress(std::int64_t generation) const;

  /// The finished batches that hold something for the archive (kept member rows, stored
  /// trajectories), in batch order (only when done()).
  std::vector<run::BatchResult> take_results();
  /// Every finished batch's summary, folded for the reduction.
  const parallel::LocalPartial& partial() const { return partial_; }
  std::int64_t finished_count() const;
  std::int64_t batch_count() const { return static_cast<std::int64_t>(finished_flags_.size()); }
  /// Steps times real members integrated by this process (restored work not counted).
  std::int64_t integrated_member_steps() const { return integrated_member_steps_; }

 private:
  plan::Batch batch_at(std::size_t i) const;  // the batch at local index i
  void start_next();
  void advance_current(std::int64_t steps);
  void finish_current();
  /// Records local batch i as finished: its summary goes into the partial, what the archive
  /// holds of it (if anything) is kept.
  void keep(std::size_t i, run::BatchResult result);
  const std::vector<double>& base_state(std::int64_t case_index);
  /// Runs `step` for the case of the batch at local index `i`; an Error it throws is
  /// rethrown with the case and its swept values in front.
  template <typename Step>
  void in_case(std::size_t i, Step&& step);

  const spec::Spec& spec_;
  const plan::Plan& plan_;
  plan::Range share_;
  const checkpoint::Store* store_;
  std::vector<char> finished_flags_;                       // per local batch: finished
  std::map<std::size_t, run::BatchResult> kept_;           // finished, with archive rows
  parallel::LocalPartial partial_;                         // every finished batch's summary
  std::vector<std::optional<run::BatchState>> resumed_;    // restored states, per local batch
  std::map<std::int64_t, std::vector<double>> base_states_;  // per case, from prepare_cases()
  std::unique_ptr<run::CaseRunner> runner_;
  std::int64_t runner_case_ = -1;
  std::unique_ptr<run::BatchProgress> current_;
  std::size_t current_index_ = 0;                          // local index of current_
  // Batches finish in local order (restored ones anywhere), so every batch before next_ has a
  // result: the next batch to start is found by moving next_ forward, never by a rescan.
  std::size_t next_ = 0;
  std::int64_t finished_ = 0;                              // local batches with a result
  std::int64_t chunk_steps_ = 64;                          // adapted to ~50 ms per chunk
  std::int64_t integrated_member_steps_ = 0;
};

}  // namespace chaosweep::app
