// Regime classification and per-member regime accounting over time. Pure numerics.
//
// A regime index is an int in [0, regimes). Classification is per time step and member;
// RegimeCounter turns the sequence of a member's regimes into residence statistics.
#pragma once

#include <cstdint>
#include <vector>

namespace chaosweep::stats {

/// Sign regimes of one observable: regime[m] = 0 when value[m] >= 0, 1 otherwise (NaN -> 1).
void classify_sign(const double* value, int width, int* regime);

/// Nearest-centroid regimes: coords[j] points to `width` values of coordinate j; each
/// centroid has coords.size() components. regime[m] is the index of the centroid with the
/// smallest squared Euclidean distance (ties go to the lower index; NaN -> 0).
void classify_nearest(const std::vector<const double*>& coords,
                      const std::vector<std::vector<double>>& centroids, int width, int* regime);

/// Residence accounting for `width` members. Per member and regime r:
///   fraction       = steps in r / steps,
///   episodes       = maximal runs of consecutive steps in r, counting the first and the last
///                    (possibly truncated) run,
///   mean residence = steps in r / episodes in r * dt  (NaN when r is never visited),
///   transitions    = number of steps whose regime differs from the previous step's.
class RegimeCounter {
 public:
  RegimeCounter(int regimes, int width);

  /// One time step: regime[m] in [0, regimes) for each member.
  void add(const int* regime);

  std::int64_t steps() const { return steps_; }
  std::int64_t steps_in(int r, int member) const;
  std::int64_t episodes(int r, int member) const;
  std::int64_t transitions(int member) const { return transitions_[member]; }
  double fraction(int r, int member) const;                   // NaN before the first step
  double mean_residence(int r, int member, double dt) const;  // time units

 private:
  int regimes_, width_;
  std::int64_t steps_ = 0;
  std::vector<std::int64_t> steps_in_, episodes_;  // [regimes][width]
  std::vector<std::int64_t> transitions_;          // [width]
  std::vector<int> current_;                       // [width], -1 before the first step
  std::vector<std::int64_t> changed_;              // [width], scratch: 1 where a run starts
};

}  // namespace chaosweep::stats
