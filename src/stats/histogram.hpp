// Per-member histograms of one observable over time. Pure numerics.
#pragma once

#include <cstdint>
#include <vector>

namespace chaosweep::stats {

/// Bin edge i (0 <= i <= bins) of `bins` equal bins on [low, high):
///   edge_i = low + (high - low) * i / bins   (edge_0 = low and edge_bins = high exactly).
double histogram_edge(double low, double high, int bins, int i);

/// Counts [width][bins]: a value v of member m falls in bin i when edge_i <= v < edge_{i+1},
/// with the edges of histogram_edge exactly. Values below low, at or above high, and NaN are
/// not counted.
class MemberHistogram {
 public:
  MemberHistogram(int bins, double low, double high, int width);

  /// One time step: values[m] for each member.
  void add(const double* values);

  std::int64_t count(int member, int bin) const;
  /// total[bin] += this member's count, for every bin (total has `bins` entries).
  void add_member_to(int member, std::int64_t* total) const;

  int bins() const { return bins_; }

 private:
  int bin_of(double v) const;  // -1 when not counted

  int bins_, width_;
  double low_, high_, scale_;   // scale_ = bins / (high - low)
  std::vector<double> edges_;   // [bins + 1]
  std::vector<std::int64_t> counts_;  // [width][bins]
};

}  // namespace chaosweep::stats
