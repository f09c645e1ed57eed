// Per-member extremes: the running minimum and maximum of several observables for every member
// of a batch, with the index of the sample each was taken from. Pure numerics: no
// communication, no I/O.
#pragma once

#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "stats/saved_state.hpp"

namespace chaosweep::stats {

/// Extremes of `series` observables x `width` members (SoA: series s, member m at
/// [s * width + m]). Samples are numbered k = 0, 1, ... in the order they are added. Starting
/// from min = +inf, max = -inf and indices -1, sample v with index k does
///   if v < min: min = v, min_at = k;      if v > max: max = v, max_at = k
/// (strict comparisons: among equal values, -0 and +0 included, the earliest sample is kept;
/// a NaN never replaces either). For a series without NaN this is std::min_element and
/// std::max_element with operator<: the values are the samples' own bits, unchanged. Only a
/// series that never compares (all NaN, or +inf throughout for the minimum, -inf throughout
/// for the maximum) keeps index -1. Every member (column) sees the same operations, so its
/// result does not depend on its column.
///
/// Fused batch kernels may update the rows directly (rows(), add_sample(), add_run() or fold()
/// and merge_run(), then added()); they must give exactly what add() gives.
class Extremes {
 public:
  Extremes(int series, int width);

  /// Adds one sample: columns[s] points to `width` values of series s.
  void add(const double* const* columns);

  /// The per-sample update of one member (T = double, I = std::int64_t) or of a SIMD vector of
  /// members (T a GCC vector of doubles, I the vector of int64 of the same length).
  template <typename T, typename I>
  static void add_sample(T v, I index, T& lo, I& lo_at, T& hi, I& hi_at) {
    const auto below = v < lo;
    const auto above = v > hi;
    lo = below ? v : lo;
    lo_at = below ? index : lo_at;
    hi = above ? v : hi;
    hi_at = above ? index : hi_at;
  }

  /// The minimum before any sample is +kInfinity, the maximum -kInfinity.
  static constexpr double kInfinity = std::numeric_limits<double>::infinity();

  /// A run of samples of one member or vector of members, sample(t) for t = 0 .. steps - 1
  /// with index first + t: the same result as add_sample() on each in order. The run's own
  /// extremes come first (fold() from +inf and -inf), then merge_run().
  template <typename T, typename I, typename Sample>
  static void add_run(const Sample& sample, int steps, std::int64_t first, T& lo, I& lo_at,
                      T& hi, I& hi_at) {
    T run_lo = T{} + kInfinity, run_hi = T{} - kInfinity;  // T{} + x: x in every element
    for (int t = 0; t < steps; ++t) fold(sample(t), run_lo, run_hi);
    merge_run(sample, steps, first, run_lo, run_hi, lo, lo_at, hi, hi_at);
  }

  /// One sample into a run's extremes, by the strict selects of add_sample() (a min and a max
  /// instruction on x86) without the indices.
  template <typename T>
  static void fold(T v, T& run_lo, T& run_hi) {
    run_lo = v < run_lo ? v : run_lo;
    run_hi = v > run_hi ? v : run_hi;
  }

  /// Merges a run's extremes (fold() over sample(t), t = 0 .. steps - 1, from +inf and -inf)
  /// into the running ones. Where the run's minimum is below the running one (or its maximum
  /// above), its index is that of the first sample of the run equal to it: that very sample,
  /// since fold() keeps the earliest of equal values. The search runs only for a run that
  /// holds a new extreme in some element, which grows rarer as a series goes on.
  template <typename T, typename I, typename Sample>
  static void merge_run(const Sample& sample, int steps, std::int64_t first, T run_lo,
                        T run_hi, T& lo, I& lo_at, T& hi, I& hi_at) {
    const auto below = run_lo < lo;
    if (any(below)) {
      lo_at = below ? first_equal<I>(sample, steps, first, run_lo) : lo_at;
      lo = below ? run_lo : lo;
    }
    const auto above = run_hi > hi;
    if (any(above)) {
      hi_at = above ? first_equal<I>(sample, steps, first, run_hi) : hi_at;
      hi = above ? run_hi : hi;
    }
  }

  /// The index first + t of the first sample(t) equal to `value` (in every element; first + steps
  /// where none is).
  template <typename I, typename T, typename Sample>
  static I first_equal(const Sample& sample, int steps, std::int64_t first, T value) {
    I at = I{} + (first + steps);
    for (int t = steps - 1; t >= 0; --t) at = sample(t) == value ? I{} + (first + t) : at;
    return at;
  }

  /// The rows a fused kernel updates, each [series][width].
  struct Rows {
    double* min;
    double* max;
    std::int64_t* min_at;
    std::int64_t* max_at;
  };
  Rows rows() { return {min_.data(), max_.data(), min_at_.data(), max_at_.data()}; }
  /// Records `samples` samples added through rows() (the next sample's index grows by it).
  void added(int samples);

  /// Samples added so far: the index the next sample gets.
  std::int64_t count() const { return count_; }

  /// Series s, member m: the extreme values and the indices of their samples (-1: none).
  double min(int series, int member) const { return min_[at(series, member)]; }
  double max(int series, int member) const { return max_[at(series, member)]; }
  std::int64_t min_at(int series, int member) const { return min_at_[at(series, member)]; }
  std::int64_t max_at(int series, int member) const { return max_at_[at(series, member)]; }

  /// The complete state as arrays `<prefix>min`, `max` ([series][width] reals),
  /// `<prefix>min_at`, `max_at` ([series][width] integers) and `<prefix>count` {samples}.
  void save(const std::string& prefix, SavedState& out) const;
  /// Restores a state saved by an accumulator of the same shape; throws chaosweep::Error if not.
  void load(const std::string& prefix, SavedStateReader& in);

 private:
  static bool any(bool mask) { return mask; }
  template <typename M>
  static bool any(const M& mask) {  // a GCC vector mask: any element set (an OR reduction)
    std::int64_t set = 0;
    for (unsigned k = 0; k < sizeof mask / sizeof mask[0]; ++k) set |= mask[k];
    return set != 0;
  }
  std::size_t at(int series, int member) const {
    return static_cast<std::size_t>(series) * static_cast<std::size_t>(width_) +
           static_cast<std::size_t>(member);
  }

  int series_, width_;
  std::int64_t count_ = 0;               // samples added
  std::vector<double> min_, max_;        // [series][width]
  std::vector<std::int64_t> min_at_, max_at_;  // [series][width], sample indices, -1: none
};

}  // namespace chaosweep::stats
