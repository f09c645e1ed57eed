// Kaplan-Meier survival estimate with Greenwood's standard error, its median and the median's
// 95% confidence interval (Brookmeyer and Crowley). Pure numerics.
//
// Used for the twin horizons: a pair "survives" while its separation stays below the
// threshold; pairs that have not separated by the last lead are right-censored there, so the
// mean over the pairs that separated is biased low and the survival curve is the honest
// summary.
#pragma once

#include <vector>

namespace chaosweep::stats {

struct Survival {
  std::vector<double> survival;  // S(t_k): share not yet failed after the events at t_k
  std::vector<double> stderr_;   // Greenwood's standard error of S(t_k) (0 where S is 0 or 1)
  double median = 0.0;           // first t_k with S <= 1/2 (NaN if none)
  double median_low = 0.0;       // first t_k with S - z se <= 1/2 (NaN if none)
  double median_high = 0.0;      // first t_k with S + z se <= 1/2 (NaN if none: beyond t_max)
};

/// Kaplan-Meier on the increasing times t_k, with events[k] failures and censored[k]
/// right-censored units at t_k (censored units count as at risk at their own time):
///   n_k = N - sum_{j<k} (events_j + censored_j),   S(t_k) = prod_{j<=k} (1 - events_j / n_j),
///   Var S(t_k) = S(t_k)^2 sum_{j<=k} events_j / (n_j (n_j - events_j))   (Greenwood 1926).
/// The median and its interval invert the pointwise band S +- z se at 1/2: the interval is
/// the set of t where |S(t) - 1/2| <= z se(t), the test-based interval of Brookmeyer and
/// Crowley (1982) on the untransformed survival, z = 1.959964 (95%). Counts are doubles
/// holding whole numbers. With no units (N = 0) every value is NaN.
Survival kaplan_meier(const std::vector<double>& t, const std::vector<double>& events,
                      const std::vector<double>& censored);

/// Whether a survival curve on the times t has levelled off: some units failed, but none in
/// the last quarter of the window (from t_0 + 3/4 (t_last - t_0) on).
bool survival_levelled_off(const std::vector<double>& t, const std::vector<double>& events);

/// How far the window would have to reach for `share` of the units to fail, extrapolated from
/// a survival curve censored at its last time T (S(T) > 1 - share): NaN when the curve has
/// levelled off or fewer than kMinShareForFit failed by T; otherwise a normal law of the
/// failure times fitted to the observed curve at two points, the first time t_a at which at least half
/// of the share failed by T had failed, and T itself:
///   sigma = (T - t_a) / (z(F_T) - z(F_a)),  mu = T - sigma z(F_T),  result mu + z(share) sigma
/// with F = 1 - S (F_a at t_a, F_T at T) and z the standard normal quantile.
double time_for_share(const std::vector<double>& t, const std::vector<double>& events,
                      const Survival& s, double share);

constexpr double kMinShareForFit = 0.2;

}  // namespace chaosweep::stats
