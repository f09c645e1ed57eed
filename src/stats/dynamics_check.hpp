// Does a case behave chaotically? Per case, the evidence the campaign gathered (Lyapunov
// exponents, the members' time means and their own errors, the twins) is checked for the
// signs of a non-chaotic case: a fixed point, a periodic orbit, or an ensemble that has
// collapsed onto one trajectory. Ensemble intervals of such a case describe no chaotic
// variability and are flagged. Pure numerics.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace chaosweep::stats {

/// What one case's estimates show (per observable vectors have one entry per observable).
struct CaseEvidence {
  std::int64_t valid_members = 0;
  std::vector<double> time_mean;          // ensemble mean of the members' time means
  std::vector<double> across_std;         // std of the members' time means across members
  std::vector<double> member_stderr_rms;  // sqrt(mean of the members' blocking stderr^2)
  std::vector<double> within_variance;    // mean of the members' time variances
  double leading_exponent = 0.0;          // ensemble-mean leading exponent; NaN when not computed
  double exponent_tolerance = 0.0;        // per time unit
  bool twins_not_separating = false;      // the twin growth-rate fit found no sustained rise
  std::string twin_note;                  // its reason
};

struct CaseVerdict {
  bool non_chaotic = false;
  bool collapsed = false;  // the members' time means coincide (zero spread across members)
  std::string reason;      // "; "-separated reasons, empty when none
};

/// The leading-exponent tolerance for a window of `duration` time units: a periodic orbit's
/// finite-time exponent is small but positive, of order 1/duration.
double exponent_tolerance(double duration);

/// The tests, each adding a reason (all observables must agree for 2 and 3):
/// 1. the ensemble-mean leading Lyapunov exponent is below the tolerance;
/// 2. the members' time means coincide: with at least kCoincideMinMembers valid members, the
///    across-member std is below kCoincideRatio times the members' own (blocking) standard
///    error, or below kCoincideRelative times the observable's root mean square (this part
///    also when the members' errors are not available);
/// 3. every member settles on a fixed point: the mean time variance is at most
///    kFixedRelative^2 times the observable's mean square (or both are 0);
/// 4. the twins do not separate.
/// For independent chaotic members the ratio in 2 is about 1: (n-1) ratio^2 follows a
/// chi-square law with n-1 degrees of freedom, and 8 members fall below 0.1 with probability
/// about 7e-7 per observable.
CaseVerdict check_dynamics(const CaseEvidence& e);

constexpr double kCoincideRatio = 0.1;
constexpr double kCoincideRelative = 1e-4;
constexpr std::int64_t kCoincideMinMembers = 8;
constexpr double kFixedRelative = 1e-6;

}  // namespace chaosweep::stats
