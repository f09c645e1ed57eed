// The checkpoint directory of one campaign: finished batches and generations of batches in
// progress, each file written atomically with a checksum and the spec's SHA-256.
// No MPI: the caller decides which rank writes what (see app/run_command.cpp).
//
// Layout of DIRECTORY:
//   campaign.yaml                       the spec verbatim, written when a fresh run starts
//   done/batch-NNNNNNNNNN.ckpt          a finished batch's complete result (written once)
//   gen-NNNNNNNN/batch-NNNNNNNNNN.ckpt  a batch in progress at generation N (member states,
//                                       every accumulator, step counter)
//   gen-NNNNNNNN/MANIFEST               written last: the generation is complete
//   gen-NNNNNNNN.partial/               a generation being written (ignored when resuming)
// Keyed by batch, never by rank, so a run may resume on any number of ranks. Because every
// batch's numbers depend only on the spec, a damaged or missing file costs only the time to
// recompute that batch, never a different result.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "run/batch_runner.hpp"

namespace chaosweep::checkpoint {

class Store {
 public:
  Store(std::string directory, std::string spec_sha256);

  const std::string& directory() const { return directory_; }

  /// True when the directory holds anything a run wrote (campaign file, batches, generations).
  bool has_content() const;
  /// The spec text stored by the run that made these checkpoints ("" if none).
  std::string stored_spec() const;

  /// Creates the directory tree and stores the spec (one rank, before any batch is saved).
  void initialise(const std::string& spec_text) const;
  /// Removes leftovers of an interrupted write (temporary files, partial generations).
  void remove_leftovers() const;

  /// Saves a finished batch at once. The file survives the death of the process immediately
  /// and a crash of the machine after the next sync_done() (called with every generation).
  void save_done(const run::BatchResult& result) const;
  void sync_done() const;
  /// A finished batch, if its file exists and is sound; otherwise nullopt and, when a file
  /// exists but cannot be used, the reason in `problem`.
  std::optional<run::BatchResult> load_done(std::int64_t batch, std::string* problem) const;

  /// Creates "gen-N.partial" (every rank may call; existing is fine).
  void begin_generation(std::int64_t generation) const;
  void save_state(std::int64_t generation, const run::BatchState& state) const;
  /// One rank, after every rank saved its states: writes the manifest, renames the generation
  /// into place, and removes generations beyond the newest `keep`.
  void commit_generation(std::int64_t generation, const std::vector<std::int64_t>& batches,
                         int keep) const;
  /// Complete generations, newest first.
  std::vector<std::int64_t> generations() const;
  /// A batch's state from a complete generation, if present and sound (else `problem` says why).
  std::optional<run::BatchState> load_state(std::int64_t generation, std::int64_t batch,
                                            std::string* problem) const;

  /// Deletes the directory's checkpoint files (after the archive is complete, or to discard
  /// an earlier run's), and the directory itself when nothing else is in it.
  void remove_all() const;
  /// remove_all() when the directory holds no finished batch and no complete generation
  /// (a run that failed before it saved anything); returns whether it did.
  bool remove_if_nothing_saved() const;

  /// What this process has written so far (for the cost report in the log).
  struct WriteStats {
    std::int64_t files = 0;
    double bytes = 0.0;
    double seconds = 0.0;
  };
  const WriteStats& write_stats() const { return stats_; }

 private:
  void write(const std::string& path, const std::string& bytes, bool durable = true) const;
  std::string done_path(std::int64_t batch) const;
  std::string generation_path(std::int64_t generation, bool partial) const;
  std::string directory_;
  std::string spec_sha256_;
  mutable WriteStats stats_;
  mutable std::vector<std::string> unsynced_;  // finished batches written since the last sync
};

}  // namespace chaosweep::checkpoint
