// Kaplan-Meier survival estimate (see survival.hpp).
#include "stats/survival.hpp"

#include <gsl/gsl_cdf.h>

#include <cmath>
#include <limits>

namespace chaosweep::stats {

Survival kaplan_meier(const std::vector<double>& t, const std::vector<double>& events,
                      const std::vector<double>& censored) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  constexpr double kZ = 1.959963984540054;  // two-sided 95% normal quantile
  constexpr double kHalf = 0.5 * (1.0 + 8.0 * std::numeric_limits<double>::epsilon());
  const std::size_t n = t.size();
  Survival s{std::vector<double>(n, kNaN), std::vector<double>(n, kNaN), kNaN, kNaN, kNaN};
  double at_risk = 0.0;
  for (std::size_t k = 0; k < n; ++k) at_risk += events[k] + censored[k];
  if (!(at_risk > 0.0)) return s;
  double survival = 1.0, greenwood = 0.0;
  for (std::size_t k = 0; k < n; ++k) {
    if (events[k] > 0.0) {
      survival *= 1.0 - events[k] / at_risk;
      if (at_risk > events[k]) greenwood += events[k] / (at_risk * (at_risk - events[k]));
    }
    s.survival[k] = survival;
    s.stderr_[k] = survival > 0.0 ? survival * std::sqrt(greenwood) : 0.0;
    at_risk -= events[k] + censored[k];
    // S is a product of ratios: a value that is 1/2 exactly may round a few ulps above it
    if (std::isnan(s.median) && survival <= kHalf) s.median = t[k];
    if (std::isnan(s.median_low) && survival - kZ * s.stderr_[k] <= 0.5) s.median_low = t[k];
    if (std::isnan(s.median_high) && survival + kZ * s.stderr_[k] <= 0.5) s.median_high = t[k];
  }
  return s;
}

bool survival_levelled_off(const std::vector<double>& t, const std::vector<double>& events) {
  if (t.empty()) return false;
  const double late = t.front() + 0.75 * (t.back() - t.front());
  bool any = false, recent = false;
  for (std::size_t k = 0; k < t.size(); ++k) {
    any = any || events[k] > 0.0;
    recent = recent || (t[k] >= late && events[k] > 0.0);
  }
  return any && !recent;
}

double time_for_share(const std::vector<double>& t, const std::vector<double>& events,
                      const Survival& s, double share) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  const std::size_t n = t.size();
  if (n < 2 || !(s.survival[n - 1] > 1.0 - share) || survival_levelled_off(t, events)) {
    return kNaN;
  }
  const double failed = 1.0 - s.survival[n - 1];
  if (!(failed >= kMinShareForFit)) return kNaN;
  std::size_t a = 0;
  while (a < n && 1.0 - s.survival[a] < 0.5 * failed) ++a;
  // the observed curve at t_a: F(t_a) = 1 - S(t_a), at least half of F_T
  const double failed_a = 1.0 - s.survival[a];
  if (!(failed_a < failed)) return kNaN;
  const double z_end = gsl_cdf_ugaussian_Pinv(failed);
  const double sigma = (t[n - 1] - t[a]) / (z_end - gsl_cdf_ugaussian_Pinv(failed_a));
  if (!(sigma > 0.0)) return kNaN;
  return t[n - 1] + (gsl_cdf_ugaussian_Pinv(share) - z_end) * sigma;
}

}  // namespace chaosweep::stats
