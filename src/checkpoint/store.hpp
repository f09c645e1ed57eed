// The checkpoint directory of one campaign: finished batches and generations of batches in
// progress, each record carrying a checksum and the spec's SHA-256.
// No MPI: the caller decides which rank writes what (see app/run_command.cpp).
//
// Layout of DIRECTORY:
//   campaign.yaml                       the spec verbatim, written when a fresh run starts
//   done/segment-RRRRR.ckpt             finished batches appended by rank R, one record each
//                                       (segment.hpp: header with batch, lengths, checksums)
//   gen-NNNNNNNN/batch-NNNNNNNNNN.ckpt  a batch in progress at generation N (member states,
//                                       every accumulator, step counter)
//   gen-NNNNNNNN/MANIFEST               written last: the generation is complete
//   gen-NNNNNNNN.partial/               a generation being written (ignored when resuming)
// The file count is therefore bounded by the ranks and the kept generations, never by the
// batches. Records are keyed by batch, not by rank: a resume on any number of ranks finds the
// finished batches from the segments' record headers (each rank reads some segments and sends
// the entries to the batches' owners, app/resume_index.hpp), and each rank reads only the
// payloads of its own. Generation files are written under a temporary name and renamed.
// Because every batch's numbers depend only on the spec, a damaged or missing record or file
// costs only the time to recompute that batch, never a different result.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "checkpoint/segment.hpp"
#include "run/batch_runner.hpp"

namespace chaosweep::checkpoint {

/// Where the records of finished batches are, from the headers of every segment.
struct DoneIndex {
  struct Location {
    std::size_t segment;  // index into `segments`
    SegmentEntry entry;
  };
  std::vector<std::string> segments;                           // paths, in rank order
  std::map<std::int64_t, std::vector<Location>> batches;       // by segment, then file order
  std::vector<std::string> problems;  // damaged headers, records of another spec (one line each)
  std::vector<std::string> cut_short;  // segments whose last record was cut short (ignored)
  /// The segment load_done() read last, kept open for the next record (batches are restored
  /// in order, so mostly from the same segment).
  mutable std::unique_ptr<SegmentReader> reader;
};

class Store {
 public:
  /// `rank` names the segment this process appends finished batches to.
  Store(std::string directory, std::string spec_sha256, int rank);
  /// Writes the records still gathered (best effort: what fails is redone by a resume).
  ~Store();

  const std::string& directory() const { return directory_; }

  /// True when the directory holds anything a run wrote (campaign file, batches, generations).
  bool has_content() const;
  /// True when done/ holds checkpoints of the older format (done/batch-N.ckpt, one file per
  /// finished batch), which this version does not read.
  bool holds_older_format() const;
  /// The spec text stored by the run that made these checkpoints ("" if none).
  std::string stored_spec() const;

  /// Creates the directory tree and stores the spec (one rank, before any batch is saved).
  void initialise(const std::string& spec_text) const;
  /// Removes leftovers of an interrupted write (temporary files, partial generations).
  void remove_leftovers() const;

  /// Appends a finished batch to this rank's segment. Records are gathered in memory and
  /// written together (one write() instead of one per batch: short batches finish thousands of
  /// times a second) when they reach kFlushBytes, and at every flush_done() (the run calls it
  /// after each round of work, about half a second) and sync_done(). A written record survives
  /// the death of the process, and a crash of the machine after the next sync_done() (called
  /// with every generation); a kill loses at most the batches finished in the current round,
  /// which a resume redoes. The first write to an existing segment cuts it back to its last
  /// sound record.
  void save_done(const run::BatchResult& result) const;
  /// Writes the records gathered so far (no sync).
  void flush_done() const;
  /// flush_done(), then fsync of the segment (and of done/ when the segment is new).
  void sync_done() const;
  static constexpr std::size_t kFlushBytes = std::size_t{1} << 20;
  /// Reads the record headers of every segment (seeking past the payloads) and indexes the
  /// records of batches in [first, last).
  DoneIndex index_done(std::int64_t first, std::int64_t last) const;
  /// The segments present, in rank order (the same list on every process).
  std::vector<std::string> segment_paths() const;
  /// Reads the record headers of segment `k` of index.segments and adds the records of
  /// batches in [first, last) to `index`, and its damage to index.problems / cut_short.
  /// (A resume on many ranks has each rank scan some segments and send the entries to the
  /// ranks that own the batches; app/resume_index.cpp.)
  void index_segment(DoneIndex& index, std::size_t k, std::int64_t first,
                     std::int64_t last) const;
  /// A finished batch from the first of its indexed records that is sound; otherwise nullopt
  /// and, when a record exists but none can be used, the reason in `problem`.
  std::optional<run::BatchResult> load_done(const DoneIndex& index, std::int64_t batch,
                                            std::string* problem) const;

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
  /// remove_all() when the directory holds no finished batch (written or gathered: it writes
  /// them first) and no complete generation (a run that failed before it saved anything);
  /// returns whether it did.
  bool remove_if_nothing_saved() const;

  /// What this process has written so far (for the cost report in the log): files created,
  /// bytes written (segment records included), seconds spent encoding, writing and syncing.
  struct WriteStats {
    std::int64_t files = 0;
    double bytes = 0.0;
    double seconds = 0.0;
  };
  const WriteStats& write_stats() const { return stats_; }

 private:
  void write(const std::string& path, const std::string& bytes) const;
  std::string segment_path(int rank) const;
  /// Segments present, as (rank, path) in rank order.
  std::vector<std::pair<int, std::string>> segments() const;
  std::string generation_path(std::int64_t generation, bool partial) const;
  std::string directory_;
  std::string spec_sha256_;
  int rank_;
  mutable WriteStats stats_;
  mutable std::unique_ptr<SegmentWriter> segment_;  // opened by the first save_done()
  struct Manifest {
    std::optional<std::vector<std::int64_t>> batches;  // sorted; none when unusable
    std::string problem;                               // why it is unusable
  };
  mutable std::map<std::int64_t, Manifest> manifests_;  // generations load_state() read
  mutable std::string record_;                      // the record being appended (reused)
  mutable std::string pending_;                     // sealed records not yet written
  mutable bool segment_unsynced_ = false;           // records appended since the last sync
  mutable bool directory_unsynced_ = false;         // the segment was created since then
};

}  // namespace chaosweep::checkpoint
