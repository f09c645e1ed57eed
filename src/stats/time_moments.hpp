// Per-member time statistics: running mean and variance of several observables for every
// member of a batch, fed once per time step. Pure numerics: no communication, no I/O.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "stats/blocking.hpp"
#include "stats/ensemble.hpp"
#include "stats/saved_state.hpp"

namespace chaosweep::stats {

/// Time moments of `series` observables x `width` members (SoA: value of series s, member m at
/// [s * width + m]). Two shifts keep every sum small: the member's first sample K0 (its origin
/// for the whole series) and, within each short block, the block's first sample Kb:
///   S1 = sum (v - Kb),  S2 = sum (v - Kb)^2            (plain sums over the block)
///   block mean - K0 = (Kb - K0) + S1 / nb,  block m2 = S2 - S1^2 / nb,
/// and each full block is merged into the running moments (kept relative to K0) with Chan's
/// update (Moments::merge). So a large offset never enters a square or a merged mean, the short
/// block bounds the growth of rounding error, and the per-step loop over members is a plain
/// vectorisable loop. Every member (column) sees the same operations, so its result does not
/// depend on its column.
///
/// Each full block's mean also feeds a blocking estimator (BlockedMeans, base length =
/// block_length), which gives the standard error of the time mean under autocorrelation at no
/// cost per step: the block means exist anyway when a block is merged.
///
/// Fused batch kernels may update the rows directly (rows(), add_sample(), then added()); they
/// must do exactly what add() does.
class TimeMoments {
 public:
  TimeMoments(int series, int width, int block_length = 256);

  /// Adds one time step: columns[s] points to `width` values of series s.
  void add(const double* const* columns);

  /// The per-sample update of one member's (or a Lanes of members') shifted sums.
  template <typename T>
  static void add_sample(T value, T shift, T& s1, T& s2) {
    const T d = value - shift;
    s1 += d;
    s2 += d * d;
  }

  /// The rows a fused kernel updates, each [series][width]. A sample that opens a block
  /// (block_starts()) first sets shift = value, and the very first sample (count() == 0) also
  /// origin = value; then every sample goes through add_sample(value, shift, s1, s2).
  struct Rows {
    double* origin;
    double* shift;
    double* s1;
    double* s2;
  };
  Rows rows() { return {origin_.data(), shift_.data(), s1_.data(), s2_.data()}; }
  bool block_starts() const { return in_block_ == 0; }
  /// Samples the current block can still take (a kernel's run of samples must not cross it).
  int block_room() const { return block_length_ - in_block_; }
  /// Records `samples` samples added through rows(); 1 <= samples <= block_room().
  void added(int samples);

  /// Moments of series s for member m over every sample added so far.
  Moments moments(int series, int member) const;

  std::int64_t count() const { return merged_count_ + in_block_; }

  /// Standard error of series s's time mean for member m, with its integrated autocorrelation
  /// time in samples (blocking_estimate over the full blocks so far; NaN while fewer than
  /// kMinBlocks blocks are complete).
  BlockingEstimate standard_error(int series, int member) const;
  /// The same given the series' moments(series, member) and a scratch for its levels, reused
  /// from member to member.
  BlockingEstimate standard_error(int series, int member, const Moments& moments,
                                  std::vector<BlockLevel>& levels) const;

  /// The complete state as arrays `<prefix>origin`, `shift`, `s1`, `s2`, `n`, `mean`, `m2`
  /// ([series][width] each), `<prefix>counts` {samples in the block, samples merged} and the
  /// blocking levels under `<prefix>blocks.` (BlockedMeans::save).
  void save(const std::string& prefix, SavedState& out) const;
  /// Restores a state saved by an accumulator of the same shape; throws chaosweep::Error if not.
  void load(const std::string& prefix, SavedStateReader& in);

 private:
  void flush();
  Moments block_moments(long index) const;

  int series_, width_, block_length_;
  int in_block_ = 0;                 // samples in the current block (same for every member)
  std::int64_t merged_count_ = 0;    // samples already merged into running_
  std::vector<double> origin_;       // [series][width], first sample of the series (K0)
  std::vector<double> shift_;        // [series][width], first sample of the current block (Kb)
  std::vector<double> s1_, s2_;      // [series][width], shifted sums of the current block
  std::vector<Moments> running_;     // [series][width], merged full blocks, mean relative to K0
  BlockedMeans blocks_;              // cells [series][width]: full-block means relative to K0
  std::vector<double> block_means_;  // [series][width], scratch for flush()
};

}  // namespace chaosweep::stats
