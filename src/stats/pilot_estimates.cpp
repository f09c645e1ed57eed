// Campaign planning from a pilot ensemble (see pilot_estimates.hpp for the notation).
#include "stats/pilot_estimates.hpp"

#include <gsl/gsl_cdf.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "stats/ensemble.hpp"

namespace chaosweep::stats {
namespace {
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kMaxMembers = 1e15;
}  // namespace

// Var_m estimates 2 tau s2 / T, so tau = T Var_m / (2 s2). With n members Var_m (n-1) / sigma_m^2
// follows chi-square with n-1 degrees of freedom, which bounds tau at 95%:
//   (n-1) Var_m / chi2_{0.975} <= sigma_m^2 <= (n-1) Var_m / chi2_{0.025}.
Decorrelation decorrelation_time(const std::vector<double>& time_means,
                                 const std::vector<double>& time_variances, double window) {
  Moments means;
  double variance_sum = 0.0;
  for (std::size_t i = 0; i < time_means.size() && i < time_variances.size(); ++i) {
    if (!std::isfinite(time_means[i]) || !std::isfinite(time_variances[i])) continue;
    means.add(time_means[i]);
    variance_sum += time_variances[i];
  }
  Decorrelation d;
  d.members = static_cast<std::int64_t>(means.n);
  d.window = window;
  d.mean_variance = means.variance();
  d.time_variance = means.n > 0.0 ? variance_sum / means.n : kNaN;
  if (means.n < 2.0 || !(d.time_variance > 0.0)) {
    d.tau = d.tau_low = d.tau_high = kNaN;
    return d;
  }
  const double dof = means.n - 1.0;
  d.tau = window * d.mean_variance / (2.0 * d.time_variance);
  d.tau_low = d.tau * dof / gsl_cdf_chisq_Pinv(0.975, dof);
  d.tau_high = d.tau * dof / gsl_cdf_chisq_Pinv(0.025, dof);
  return d;
}

PairedDifference paired_difference(const std::vector<double>& a, const std::vector<double>& b) {
  Moments ma, mb, md;
  for (std::size_t i = 0; i < a.size() && i < b.size(); ++i) {
    if (!std::isfinite(a[i]) || !std::isfinite(b[i])) continue;
    ma.add(a[i]);
    mb.add(b[i]);
    md.add(a[i] - b[i]);
  }
  PairedDifference p;
  p.n = static_cast<std::int64_t>(md.n);
  p.mean_a = p.n > 0 ? ma.mean : kNaN;
  p.mean_b = p.n > 0 ? mb.mean : kNaN;
  p.difference = p.n > 0 ? md.mean : kNaN;
  p.stderr_ = md.stddev() / std::sqrt(md.n);  // NaN when n < 2
  return p;
}

double dt_change_floor(double mean, double time_variance, double dt, double window) {
  const double sd = std::sqrt(std::max(time_variance, 0.0));
  return kRestRelative * std::sqrt(mean * mean + sd * sd) + dt * sd / window;
}

void add_evidence(BehaviourEvidence& e, double mean, double time_variance, double end_variance) {
  const double sd = std::sqrt(std::max(time_variance, 0.0));
  const double size = std::sqrt(mean * mean + sd * sd);
  if (size > 0.0) e.rest = std::max(e.rest, sd / size);
  if (!std::isfinite(mean) || !std::isfinite(time_variance)) e.rest = kNaN;
  if (sd > 0.0) {
    const double ratio = std::sqrt(std::max(end_variance, 0.0)) / sd;
    e.together = std::isnan(e.together) ? ratio : std::max(e.together, ratio);
  }
}

CaseBehaviour classify(const BehaviourEvidence& e) {
  if (e.rest <= kRestRelative) return CaseBehaviour::fixed_point;
  if (e.together < kTogetherBelow) return CaseBehaviour::together;
  if (e.growth >= kChaoticGrowth) return CaseBehaviour::chaotic;
  return CaseBehaviour::independent;
}

const char* behaviour_name(CaseBehaviour b) {
  switch (b) {
    case CaseBehaviour::fixed_point: return "fixed point";
    case CaseBehaviour::together: return "periodic or collapsed";
    case CaseBehaviour::independent: return "independent";
    case CaseBehaviour::chaotic: return "chaotic";
  }
  return "?";
}

double flag_threshold(int comparisons, std::int64_t n) {
  if (n < 2 || comparisons < 1) return kNaN;
  return gsl_cdf_tdist_Pinv(1.0 - 0.005 / comparisons, static_cast<double>(n - 1));
}

// h = t_{0.975, n-1} sqrt(W / (n T)).
double mean_halfwidth(double w, std::int64_t members, double duration) {
  if (members < 2) return kNaN;
  const double n = static_cast<double>(members);
  return student_t975(n - 1.0) * std::sqrt(w / (n * duration));
}

// The normal approximation n0 = z^2 W / (T X^2) (z = 1.959964) is a lower bound, since
// t_{0.975, n-1} > z; from there n grows until the Student-t half-width meets the target.
std::int64_t members_needed(double w, double duration, double target) {
  if (!(std::isfinite(w) && w >= 0.0 && duration > 0.0 && target > 0.0 && std::isfinite(target))) {
    return -1;
  }
  const double z = gsl_cdf_ugaussian_Pinv(0.975);
  const double n0 = std::ceil(z * z * w / (duration * target * target));
  if (!(n0 <= kMaxMembers)) return -1;
  std::int64_t n = std::max<std::int64_t>(2, static_cast<std::int64_t>(n0));
  while (mean_halfwidth(w, n, duration) > target) {
    // Above a few hundred members t and z differ by < 1%: step in proportion, then refine.
    const double h = mean_halfwidth(w, n, duration);
    const double ratio = (h / target) * (h / target);
    const std::int64_t step = std::max<std::int64_t>(1, static_cast<std::int64_t>(n * (ratio - 1.0) / 2));
    n += step;
    if (n > kMaxMembers) return -1;
  }
  while (n > 2 && mean_halfwidth(w, n - 1, duration) <= target) --n;
  return n;
}

// T = t_{0.975, n-1}^2 W / (n X^2).
double duration_needed(double w, std::int64_t members, double target) {
  if (members < 2) return kNaN;
  const double t = student_t975(static_cast<double>(members - 1));
  return t * t * w / (static_cast<double>(members) * target * target);
}

}  // namespace chaosweep::stats
