// The ensemble time mean's errors from its members' errors (see member_errors.hpp).
#include "stats/member_errors.hpp"

#include <cmath>

#include "stats/blocking.hpp"
#include "stats/ensemble.hpp"

namespace chaosweep::stats {

void MemberErrorSums::merge(const double* packed) {
  samples += packed[0];
  variance += packed[1];
  tau += packed[2];
  time_variance += packed[3];
}

void MemberErrorSums::append_to(double* out) const {
  out[0] = samples;
  out[1] = variance;
  out[2] = tau;
  out[3] = time_variance;
}

TimeMeanErrors time_mean_errors(const MemberErrorSums& sums, double valid, double time_mean,
                                double across_std) {
  TimeMeanErrors e;
  e.effective_samples = sums.samples;
  e.decorrelation_time = sums.tau / valid;
  e.stderr_ = ensemble_mean_stderr(across_std, valid, sums.variance);
  e.member_stderr_rms = std::sqrt(sums.variance / valid);
  e.member_time_variance = sums.time_variance / valid;
  // The interval of the ensemble mean from the larger of the across-member and the
  // within-member error (the same t quantile, n - 1 degrees of freedom).
  const double half = student_t975(valid - 1.0) * e.stderr_;
  e.ci_low = time_mean - half;
  e.ci_high = time_mean + half;
  return e;
}

}  // namespace chaosweep::stats
