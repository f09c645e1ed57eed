// Non-chaotic cases (see dynamics_check.hpp).
#include "stats/dynamics_check.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace chaosweep::stats {
namespace {

std::string format(const char* pattern, double a, double b = 0.0) {
  char text[240];
  std::snprintf(text, sizeof text, pattern, a, b);
  return text;
}

void add(std::string& reasons, const std::string& reason) {
  reasons += (reasons.empty() ? "" : "; ") + reason;
}

/// Whether the members' time means coincide for every observable; `ratio` gets the largest
/// across-member std over the members' own standard error (NaN when they have none).
bool members_coincide(const CaseEvidence& e, double& ratio) {
  ratio = 0.0;
  const std::size_t n_obs = e.time_mean.size();
  if (n_obs == 0 || e.valid_members < 2) return false;
  for (std::size_t o = 0; o < n_obs; ++o) {
    const double rms = std::sqrt(e.time_mean[o] * e.time_mean[o] + e.within_variance[o]);
    const double spread = e.across_std[o];
    if (!(spread <= kCoincideRelative * rms)) {
      const double r = spread / e.member_stderr_rms[o];
      if (e.valid_members < kCoincideMinMembers || !(r < kCoincideRatio)) return false;
      ratio = std::max(ratio, r);
    }
  }
  return true;
}

bool fixed_point(const CaseEvidence& e) {
  if (e.time_mean.empty() || e.valid_members < 1) return false;
  for (std::size_t o = 0; o < e.time_mean.size(); ++o) {
    const double square = e.time_mean[o] * e.time_mean[o] + e.within_variance[o];
    if (!(e.within_variance[o] <= kFixedRelative * kFixedRelative * square)) return false;
  }
  return true;
}

}  // namespace

double exponent_tolerance(double duration) { return std::max(0.01, 2.0 / duration); }

CaseVerdict check_dynamics(const CaseEvidence& e) {
  CaseVerdict v;
  if (std::isfinite(e.leading_exponent) && e.leading_exponent < e.exponent_tolerance) {
    add(v.reason, format("leading Lyapunov exponent %.3g per time unit, below the tolerance "
                         "%.3g (max(0.01, 2 / duration))",
                         e.leading_exponent, e.exponent_tolerance));
  }
  if (fixed_point(e)) {
    add(v.reason, "every member settles on a fixed point (time variances below 1e-12 of the "
                  "mean squares)");
  }
  double ratio = 0.0;
  if (members_coincide(e, ratio)) {
    v.collapsed = true;
    add(v.reason, ratio > 0.0
                      ? format("the members' time means coincide (spread across members at "
                               "most %.2g times their own standard errors): the ensemble has "
                               "collapsed onto one orbit",
                               ratio)
                      : "the members' time means coincide (spread across members below 1e-4 "
                        "of the observables' size): the ensemble has collapsed onto one orbit");
  }
  if (e.twins_not_separating) add(v.reason, "the twins do not separate: " + e.twin_note);
  v.non_chaotic = !v.reason.empty();
  return v;
}

}  // namespace chaosweep::stats
