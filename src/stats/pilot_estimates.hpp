// Campaign planning from a pilot ensemble: the decorrelation time of a time mean, the paired
// comparison of two step sizes, and the members x duration a target precision needs.
// Pure numerics: no communication, no I/O.
//
// Notation. An observable x of a stationary chaotic run has time variance s2 and integrated
// autocorrelation time tau = integral_0^inf rho(t) dt (model time units; in steps of a series,
// tau_int = 1/2 + sum_{k>=1} rho(k), Sokal 1997). The time mean over a window T >> tau has
// variance 2 tau s2 / T across independent members. W = 2 tau s2 (units^2 x time) is therefore
// the "variance per unit of averaging time": an ensemble of n members each averaged over T
// has standard error sqrt(W / (n T)). Every figure below is built from W.
#pragma once

#include <cstdint>
#include <vector>

namespace chaosweep::stats {

/// Decorrelation time of one observable from an ensemble of independent members observed over
/// the same window.
struct Decorrelation {
  double tau = 0.0;            // T Var_m / (2 s2), in the window's time units
  double tau_low = 0.0;        // 95% interval of tau from the chi-square law of Var_m
  double tau_high = 0.0;       //   (n-1 degrees of freedom; s2 is taken as exact)
  double mean_variance = 0.0;  // Var_m: variance across members of their time means
  double time_variance = 0.0;  // s2: mean of the members' within-member time variances
  double window = 0.0;         // T
  std::int64_t members = 0;    // members with finite values
  /// W = 2 tau s2 = T Var_m: the across-member variance of a time mean times its window.
  double variance_time() const { return window * mean_variance; }
};

/// tau = T Var_m / (2 s2) from the members' time means and within-member time variances over
/// a window of length `window` (any time unit; tau comes out in the same unit). Valid for
/// T >> tau. Members with a non-finite mean or variance are skipped; NaN results when fewer
/// than 2 remain. This is the one place the estimator lives: a per-member blocking standard
/// error could replace it without changing its callers.
Decorrelation decorrelation_time(const std::vector<double>& time_means,
                                 const std::vector<double>& time_variances, double window);

/// Paired comparison of the same members under two settings: d_i = a_i - b_i.
struct PairedDifference {
  double mean_a = 0.0;
  double mean_b = 0.0;
  double difference = 0.0;  // mean of d_i (= mean_a - mean_b over the paired members)
  double stderr_ = 0.0;     // sd(d_i) / sqrt(n)
  std::int64_t n = 0;       // members finite under both settings
};
PairedDifference paired_difference(const std::vector<double>& a, const std::vector<double>& b);

/// Two-sided Student-t quantile for `comparisons` simultaneous tests at a family-wise 1% level
/// (Bonferroni): t_{1 - 0.005/k, n-1}. A pilot whose dt is adequate is then flagged by chance
/// in at most 1 of 100 pilots, however many cases and observables it compares. For one
/// comparison and n = 32 it is 2.74; for 9 comparisons, 3.6. NaN for n < 2.
double flag_threshold(int comparisons, std::int64_t n);

/// 95% half-width t_{0.975, n-1} sqrt(W / (n T)) of an ensemble mean of n members, each a time
/// mean over T. NaN for n < 2.
double mean_halfwidth(double w, std::int64_t members, double duration);

/// Smallest n >= 2 with mean_halfwidth(w, n, T) <= target; -1 when W or the target is not
/// finite and positive, or when n would exceed 1e15.
std::int64_t members_needed(double w, double duration, double target);

/// The duration T at which mean_halfwidth(w, n, T) = target: T = t_{0.975,n-1}^2 W / (n X^2).
/// NaN for n < 2.
double duration_needed(double w, std::int64_t members, double target);

}  // namespace chaosweep::stats
