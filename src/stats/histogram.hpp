// Per-member histograms of one observable over time. Pure numerics.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "stats/histogram_lanes.hpp"
#include "stats/saved_state.hpp"

namespace chaosweep::stats {

/// Bin edge i (0 <= i <= bins) of `bins` equal bins on [low, high):
///   edge_i = low + i * ((high - low) / bins)   for i < bins,   edge_bins = high,
/// evaluated exactly as MemberHistogram's vectorised bin loop evaluates it (edge_0 = low).
double histogram_edge(double low, double high, int bins, int i);

/// Counts [width][bins]: a value v of member m falls in bin i when edge_i <= v < edge_{i+1},
/// with the edges of histogram_edge exactly. Values below low, at or above high, and NaN are
/// not counted.
class MemberHistogram {
 public:
  MemberHistogram(int bins, double low, double high, int width);

  /// One time step: values[m] for each member.
  void add(const double* values);
  /// `steps` time steps: values is [steps][width].
  void add_steps(const double* values, int steps);
  /// `steps` time steps already binned: slots is [steps][width], member m's entry
  /// m (bins + 1) + its bin, or + bins when its value is not counted (a fused kernel bins as it
  /// steps, with lanes()).
  void add_slots(const std::int32_t* slots, int steps);
#if defined(__AVX512F__)
  /// The bin rule on eight values at once: the same bins as add_steps.
  HistogramLanes lanes() const;
#endif

  std::int64_t count(int member, int bin) const;
  /// total[bin] += this member's count, for every bin (total has `bins` entries).
  void add_member_to(int member, std::int64_t* total) const;

  int bins() const { return bins_; }

  /// The complete state: integer array `<prefix>counts` [width][bins].
  void save(const std::string& prefix, SavedState& out) const;
  /// Restores counts saved by a histogram of the same shape; throws chaosweep::Error if not.
  void load(const std::string& prefix, SavedStateReader& in);

 private:
  int bins_, width_;
  double low_, high_, scale_;   // scale_ = bins / (high - low)
  double bin_width_;            // (high - low) / bins
  std::vector<std::int64_t> counts_;  // [width][bins + 1]: the last entry of a row discards
  std::vector<std::int32_t> slot_;    // [width], scratch: member m counts at m (bins + 1) + bin
};

}  // namespace chaosweep::stats
