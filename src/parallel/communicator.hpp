// The only user of <mpi.h> outside h5/: a thin, checked wrapper of the MPI calls the campaign
// needs (rank and size, the rank-order combination of partial results, agreement on stop,
// aborting every rank together). Every call is collective unless said otherwise.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <vector>

namespace chaosweep::parallel {

/// Initialises MPI on construction and finalises it on destruction (RAII for main()).
class Session {
 public:
  Session(int* argc, char*** argv);
  ~Session();
  Session(const Session&) = delete;
  Session& operator=(const Session&) = delete;
};

/// The world communicator, or its serial form: one rank on its own, without MPI (every
/// collective returns this rank's own contribution), so that the reduction is a pure function
/// that unit tests call without starting MPI.
class Communicator {
 public:
  Communicator();
  static Communicator serial() { return Communicator(SerialTag{}); }
  int rank() const { return rank_; }
  int size() const { return size_; }

  /// Gathers every rank's `local` values, concatenated in rank order, on every rank.
  std::vector<std::int64_t> allgather_in_rank_order(const std::vector<std::int64_t>& local) const;

  /// All to all: `to_rank[r]` goes to rank r (one vector per rank); returns what every rank
  /// sent this one, concatenated in rank order.
  std::vector<std::int64_t> exchange(const std::vector<std::vector<std::int64_t>>& to_rank) const;

  /// Every rank's `local` text on rank 0, in rank order; the other ranks get an empty list.
  std::vector<std::string> gather_on_root(const std::string& local) const;

  /// right = left (+) right for two same-sized blocks, `left` from the lower ranks.
  using Combine = std::function<void(const double* left, double* right)>;
  /// Every rank's `local` block (the same size on every rank) combined in rank order,
  /// local_0 (+) local_1 (+) ... , on every rank. `combine` must be associative; the grouping
  /// is MPI's, so the result is reproducible only when associativity is exact.
  std::vector<double> combine_in_rank_order(const std::vector<double>& local,
                                            const Combine& combine) const;
  /// Element-wise sum over ranks (the same size on every rank); exact for integers.
  std::vector<std::int64_t> sum(const std::vector<std::int64_t>& values) const;

  /// What the ranks agree on at the end of a round of work (see app/run_command.cpp).
  struct RoundAgreement {
    bool stop = false;        // some rank received a stop signal
    bool checkpoint = false;  // some rank (rank 0's clock) asks for a checkpoint now
    bool all_done = false;    // every rank has finished its batches
  };
  /// One collective per round: combines every rank's flags.
  RoundAgreement agree(bool stop, bool checkpoint, bool done) const;

  /// True on every rank when `flag` is true on any rank.
  bool any(bool flag) const;
  /// Largest of the ranks' values.
  double max(double value) const;
  /// Sum over ranks.
  std::int64_t sum(std::int64_t value) const;
  /// Broadcasts rank 0's string to every rank.
  std::string broadcast(const std::string& value) const;
  void barrier() const;

  /// Not collective: terminates every rank with `code` (used after a fatal error on one rank).
  [[noreturn]] void abort(int code) const;

 private:
  struct SerialTag {};
  explicit Communicator(SerialTag) : serial_(true) {}

  int rank_ = 0;
  int size_ = 1;
  bool serial_ = false;  // no MPI: rank 0 of 1
};

}  // namespace chaosweep::parallel
