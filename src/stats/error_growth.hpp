// Growth rate of the mean log separation of twins over its linear phase. Pure numerics.
#pragma once

#include <vector>

namespace chaosweep::stats {

/// Least-squares slope of L(t) over the linear phase of a twin error-growth curve, and the
/// window it was fitted over.
struct GrowthFit {
  double rate = 0.0;           // slope of L against t, per time unit (NaN when no window)
  double start = 0.0, end = 0.0;  // first and last t of the window (NaN when none)
  int points = 0;              // leads in the window (0 when none)
};

/// The linear phase of a mean log separation curve L(t_k), k = 0 .. n-1 (t increasing):
/// with L0 = L(t_0) and R = max_k L - L0 (the rise to saturation), the window runs from the
/// first lead with L >= L0 + kLow R to the first lead with L >= L0 + kHigh R. Below it the
/// separation is still aligning with the fastest-growing direction; above it the growth slows
/// as the separation approaches the size of the attractor. The fit is ordinary least squares
/// of L on t over the window's leads. No window (NaN rate) when L0 or the rise is not finite
/// and positive, or the window holds fewer than 3 leads. NaN values of L end the curve.
GrowthFit fit_growth_rate(const std::vector<double>& t, const std::vector<double>& L);

constexpr double kGrowthWindowLow = 0.1;   // share of the rise where the window starts
constexpr double kGrowthWindowHigh = 0.7;  // share of the rise where it ends

}  // namespace chaosweep::stats
