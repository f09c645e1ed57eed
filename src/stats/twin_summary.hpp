// The twin experiment of one case from its merged partials: the mean and spread of the log
// separation at each lead, the growth rate over its linear phase, the ensemble horizon, the
// survival of the pairs with its median, and the duration by which most pairs would separate.
// Pure numerics; the caller merges the partials across batches in a fixed order.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "stats/ensemble.hpp"

namespace chaosweep::stats {

/// Partials of one case, merged over its batches.
struct TwinPartials {
  std::vector<Moments> separation;  // [lead]: log separation over the valid pairs
  Moments horizon;                  // the finite horizons of the valid pairs
  Moments level;                    // log(threshold * spread) of the valid pairs
  std::vector<double> separated;    // [lead]: pairs first separated at that lead
  double unseparated = 0.0;         // pairs not separated by the last lead

  explicit TwinPartials(std::size_t leads = 0) : separation(leads), separated(leads, 0.0) {}
};

/// What the archive reports of one case.
struct TwinSummary {
  std::vector<double> log_separation, log_separation_std;  // [lead]
  std::int64_t pairs = 0;
  double growth_rate = 0.0, window_first = 0.0, window_last = 0.0;
  std::string growth_note;
  bool not_separating = false;  // more than one pair and no significant sustained rise
  EnsembleEstimate horizon;     // over the pairs that separated
  std::vector<double> unseparated_fraction;  // [lead], Kaplan-Meier
  double median = 0.0, median_low = 0.0, median_high = 0.0;
  double suggested_duration = 0.0;  // NaN unless fewer than `most` of the pairs separated
};

/// The summary of one case at lead times `lead` (model time units); `most` is the share of
/// pairs expected to separate within the window (below it, a suggested duration).
TwinSummary summarise_twins(const std::vector<double>& lead, const TwinPartials& t, double most);

}  // namespace chaosweep::stats
