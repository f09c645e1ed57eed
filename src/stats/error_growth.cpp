// Linear-phase fit of twin error growth (see error_growth.hpp).
#include "stats/error_growth.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace chaosweep::stats {

GrowthFit fit_growth_rate(const std::vector<double>& t, const std::vector<double>& L) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  GrowthFit fit{kNaN, kNaN, kNaN, 0};
  std::size_t n = std::min(t.size(), L.size());
  for (std::size_t k = 0; k < n; ++k) {
    if (!std::isfinite(L[k])) n = k;
  }
  if (n < 3) return fit;
  const double low = L[0];
  const double rise = *std::max_element(L.begin(), L.begin() + static_cast<long>(n)) - low;
  if (!(rise > 0.0)) return fit;
  std::size_t first = 0;
  while (first < n && L[first] < low + kGrowthWindowLow * rise) ++first;
  std::size_t last = first;
  while (last < n && L[last] < low + kGrowthWindowHigh * rise) ++last;
  if (last >= n || last < first + 2) return fit;
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
  fit.rate = stL / stt;
  fit.start = t[first];
  fit.end = t[last];
  fit.points = static_cast<int>(count);
  return fit;
}

}  // namespace chaosweep::stats
