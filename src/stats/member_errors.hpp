// The ensemble time mean's errors from its members' own errors: per (case, observable), sums
// over the valid members of their effective samples, squared standard errors, integrated
// autocorrelation times and time variances (added in a fixed order by the caller), and what
// the ensemble estimates are made of them. Pure numerics.
#pragma once

namespace chaosweep::stats {

/// Sums over valid members; add() one member at a time, merge() sums of other members.
struct MemberErrorSums {
  double samples = 0.0;        // sum of n_eff = n / (2 tau_int)
  double variance = 0.0;       // sum of stderr^2
  double tau = 0.0;            // sum of tau_int, model time units
  double time_variance = 0.0;  // sum of the members' time variances

  static constexpr int kPacked = 4;
  void add(double member_samples, double member_stderr, double member_tau,
           double member_time_variance) {
    samples += member_samples;
    variance += member_stderr * member_stderr;
    tau += member_tau;
    time_variance += member_time_variance;
  }
  void merge(const double* packed);  // adds kPacked sums laid out as above
  void append_to(double* out) const;
};

/// The ensemble's error estimates of one (case, observable).
struct TimeMeanErrors {
  double stderr_ = 0.0;               // ensemble_mean_stderr(across_std, valid, variance)
  double effective_samples = 0.0;     // samples
  double decorrelation_time = 0.0;    // mean tau_int
  double member_stderr_rms = 0.0;     // sqrt(mean stderr^2)
  double member_time_variance = 0.0;  // mean time variance
  double ci_low = 0.0, ci_high = 0.0; // time_mean -+ t(0.975, valid - 1) * stderr_
};

/// From the sums over `valid` (>= 1) members, the ensemble mean `time_mean` and the standard
/// deviation of the members' time means `across_std`.
TimeMeanErrors time_mean_errors(const MemberErrorSums& sums, double valid, double time_mean,
                                double across_std);

}  // namespace chaosweep::stats
