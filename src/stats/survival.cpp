// Kaplan-Meier survival estimate (see survival.hpp).
#include "stats/survival.hpp"

#include <cmath>
#include <limits>

namespace chaosweep::stats {

Survival kaplan_meier(const std::vector<double>& t, const std::vector<double>& events,
                      const std::vector<double>& censored) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  constexpr double kZ = 1.959963984540054;  // two-sided 95% normal quantile
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
    if (std::isnan(s.median) && survival <= 0.5) s.median = t[k];
    if (std::isnan(s.median_low) && survival - kZ * s.stderr_[k] <= 0.5) s.median_low = t[k];
    if (std::isnan(s.median_high) && survival + kZ * s.stderr_[k] <= 0.5) s.median_high = t[k];
  }
  return s;
}

}  // namespace chaosweep::stats
