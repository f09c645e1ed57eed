// Regime classification and per-member regime accounting over time. Pure numerics.
//
// A regime index is an int in [0, regimes). Classification is per time step and member;
// RegimeCounter turns the sequence of a member's regimes into residence statistics.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "stats/saved_state.hpp"

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
/// Per step and member, with `current` the previous step's regime (-1 before the first step):
///   starts = (regime != current);  steps_in[regime] += 1;  episodes[regime] += starts;
///   transitions += starts and current >= 0;  current = regime.
/// Fused batch kernels may apply this update to rows() directly and then call added().
class RegimeCounter {
 public:
  RegimeCounter(int regimes, int width);

  /// One time step: regime[m] in [0, regimes) for each member.
  void add(const int* regime);

  /// The rows a fused kernel updates: steps_in and episodes [regimes][width], transitions and
  /// current [width].
  struct Rows {
    std::int64_t* steps_in;
    std::int64_t* episodes;
    std::int64_t* transitions;
    std::int64_t* current;
  };
  Rows rows() { return {steps_in_.data(), episodes_.data(), transitions_.data(), current_.data()}; }
  /// Records `steps` steps applied through rows().
  void added(std::int64_t steps) { steps_ += steps; }

  std::int64_t steps() const { return steps_; }
  std::int64_t steps_in(int r, int member) const;
  std::int64_t episodes(int r, int member) const;
  std::int64_t transitions(int member) const { return transitions_[member]; }
  double fraction(int r, int member) const;                   // NaN before the first step
  double mean_residence(int r, int member, double dt) const;  // time units

  /// The complete state as integer arrays `<prefix>steps` {steps}, `steps_in`, `episodes`
  /// ([regimes][width]), `transitions` and `current` ([width]).
  void save(const std::string& prefix, SavedState& out) const;
  /// Restores a state saved by a counter of the same shape; throws chaosweep::Error if not.
  void load(const std::string& prefix, SavedStateReader& in);

 private:
  int regimes_, width_;
  std::int64_t steps_ = 0;
  std::vector<std::int64_t> steps_in_, episodes_;  // [regimes][width]
  std::vector<std::int64_t> transitions_;          // [width]
  std::vector<std::int64_t> current_;              // [width], -1 before the first step
  std::vector<std::int64_t> changed_;              // [width], scratch: 1 where a run starts
};

}  // namespace chaosweep::stats
