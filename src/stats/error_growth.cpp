// Linear-phase fit of twin error growth (see error_growth.hpp).
#include "stats/error_growth.hpp"

#include <gsl/gsl_cdf.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

namespace chaosweep::stats {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string format(const char* pattern, double a, double b = 0.0) {
  char text[200];
  std::snprintf(text, sizeof text, pattern, a, b);
  return text;
}

GrowthFit no_fit(GrowthOutcome outcome, std::string note) {
  GrowthFit fit{kNaN, kNaN, kNaN, kNaN, 0, outcome, std::move(note)};
  return fit;
}

}  // namespace

GrowthFit fit_growth_rate(const std::vector<double>& t, const std::vector<double>& L,
                          const std::vector<double>& se) {
  std::size_t n = std::min({t.size(), L.size(), se.size()});
  for (std::size_t k = 0; k < n; ++k) {
    if (!std::isfinite(L[k])) n = k;
  }
  if (n < 3) {
    return no_fit(GrowthOutcome::no_curve,
                  "fewer than 3 leads with a finite mean log separation");
  }
  const double low = L[0];
  const double rise = *std::max_element(L.begin(), L.begin() + static_cast<long>(n)) - low;
  if (!(rise > 0.0)) {
    return no_fit(GrowthOutcome::no_rise,
                  "the mean log separation never rises above its value at lead 0");
  }
  std::size_t first = 0;
  while (first < n && L[first] < low + kGrowthWindowLow * rise) ++first;
  std::size_t last = first;
  while (last < n && L[last] < low + kGrowthWindowHigh * rise) ++last;
  // The rise must hold, significantly, from the window's end to the last lead.
  for (std::size_t k = std::min(last, n - 1); k < n; ++k) {
    const double error = std::sqrt(se[k] * se[k] + se[0] * se[0]);
    if (!std::isfinite(error)) {
      return no_fit(GrowthOutcome::untestable,
                    "the rise cannot be tested: its standard errors need at least 2 valid pairs");
    }
    if (!(L[k] - low > kRiseSignificance * error)) {
      return no_fit(GrowthOutcome::not_sustained,
                    format("no significant sustained rise: at lead %g the mean log separation "
                           "is within 3 standard errors of its value at lead 0 (it rose by "
                           "%.3g at most, then fell back)",
                           t[k], rise));
    }
  }
  if (last >= n || last < first + 2) {
    return no_fit(GrowthOutcome::short_phase,
                  "the linear phase holds fewer than 3 leads; record them more often "
                  "(statistics.twins.every)");
  }
  // Ordinary least squares about the window's means.
  const double count = static_cast<double>(last - first + 1);
  double mt = 0.0, mL = 0.0;
  for (std::size_t k = first; k <= last; ++k) {
    mt += t[k];
    mL += L[k];
  }
  mt /= count;
  mL /= count;
  double stt = 0.0, stL = 0.0;
  for (std::size_t k = first; k <= last; ++k) {
    stt += (t[k] - mt) * (t[k] - mt);
    stL += (t[k] - mt) * (L[k] - mL);
  }
  GrowthFit fit;
  fit.rate = stL / stt;
  fit.intercept = mL - fit.rate * mt;
  fit.start = t[first];
  fit.end = t[last];
  fit.points = static_cast<int>(count);
  fit.outcome = GrowthOutcome::fitted;
  return fit;
}

double lead_for_share(const GrowthFit& fit, double sd_end, double level, double share) {
  if (fit.outcome != GrowthOutcome::fitted || !(fit.rate > 0.0) || !(fit.end > 0.0) ||
      !std::isfinite(sd_end) || !std::isfinite(level)) {
    return kNaN;
  }
  // With u = sqrt(t): rate u^2 - b u - (level - a) = 0, b = z sd_end / sqrt(t_end); the
  // positive root.
  const double z = gsl_cdf_ugaussian_Pinv(share);
  const double b = z * sd_end / std::sqrt(fit.end);
  const double c = level - fit.intercept;
  const double disc = b * b + 4.0 * fit.rate * c;
  if (disc < 0.0) return kNaN;
  const double u = (b + std::sqrt(disc)) / (2.0 * fit.rate);
  return u > 0.0 ? u * u : kNaN;
}

}  // namespace chaosweep::stats
