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
#include <limits>
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

/// The smallest change of an ensemble time mean between dt and dt/2 that the pilot counts,
/// whatever its standard error: members that coincide (a fixed point, a periodic orbit all
/// members follow at the same phase) differ by almost nothing, their paired standard error
/// falls towards rounding, and any sampling difference between the two runs would otherwise
/// look significant. Two terms, for an observable of time mean `mean` and time variance s2
/// over a window T sampled at the end of every step:
///   1e-6 sqrt(mean^2 + s2)  a millionth of the observable's root-mean-square size, far above
///       the rounding of a time mean (1e-16 relative per operation, ~1e-10 after 1e6 steps)
///       and below any difference a campaign of this tool resolves (this project's choice);
///   dt sqrt(s2) / T  the sampling of the same window: the samples at dt/2 are those at dt plus
///       the midpoints, so the two means differ by (1/2N) sum_k [x(k dt) - x((k - 1/2) dt)]
///       = dt (x(T) - x(0)) / (4T) to leading order in dt (for a smooth x; it shrinks like dt,
///       not like RK4's dt^4). |x(T) - x(0)| is at most the observable's range, 2 sqrt(2) sd
///       for a sinusoid; 4 sd leaves room for other wave forms.
double dt_change_floor(double mean, double time_variance, double dt, double window);

/// What a pilot case's members do over the window, from the run at dt:
///   fixed_point  every observable's time variation is at most 1e-6 of its size (the floor's
///                relative term): the members rest at a fixed point;
///   together     the members' spread across the ensemble at the end of the window is under
///                a tenth of their own time variation for every observable: they move as one
///                (a periodic orbit or a slow approach to a fixed point followed at the same
///                phase, or a pilot too short for their differences to grow), so their time
///                means are not independent samples;
///   chaotic      they spread like independent samples (the across-member spread at one time
///                matches the time variation of one member when they sample the same
///                stationary law) after their initial spread grew at least tenfold;
///   independent  spread like independent samples, but they started so far apart (growth
///                under tenfold) that the pilot cannot tell chaos from a regular motion
///                visited at random phases.
/// The thresholds are this project's choice: with n >= 8 independent members the chance that
/// the ratio of spreads falls under a tenth is below 1e-8 (chi-square with 7 degrees of
/// freedom under 0.07), and a chaotic pilot's spread grows by far more than tenfold from the
/// spec's small perturbations.
enum class CaseBehaviour { fixed_point, together, independent, chaotic };

struct BehaviourEvidence {
  double rest = 0.0;      // largest over observables of sqrt(s2) / sqrt(mean^2 + s2) (0 if 0/0)
  double together = std::numeric_limits<double>::quiet_NaN();
                          // largest over observables with s2 > 0 of sqrt(end variance / s2),
                          // NaN when no observable varies
  double growth = 0.0;    // rms distance of the members' states from their ensemble mean at
                          // the end of the window over the same at the start
};
constexpr double kRestRelative = 1e-6;
constexpr double kTogetherBelow = 0.1;
constexpr double kChaoticGrowth = 10.0;

/// One observable's contribution: its ensemble time mean, mean time variance s2 and variance
/// across members at the end of the window; merged into `e` (largest ratios win).
void add_evidence(BehaviourEvidence& e, double mean, double time_variance, double end_variance);
CaseBehaviour classify(const BehaviourEvidence& e);
const char* behaviour_name(CaseBehaviour b);

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
