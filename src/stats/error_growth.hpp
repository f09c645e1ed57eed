// Growth rate of the mean log separation of twins over its linear phase. Pure numerics.
#pragma once

#include <string>
#include <vector>

namespace chaosweep::stats {

/// Why a growth-rate fit has no value (or `fitted`).
enum class GrowthOutcome {
  fitted,
  no_curve,       // fewer than 3 leads with a finite mean log separation
  no_rise,        // the curve never rises above its value at lead 0
  not_sustained,  // the rise is not significant: the curve falls back towards its start
  short_phase,    // the linear phase holds fewer than 3 leads
  untestable,     // the rise's standard errors are not finite (fewer than 2 pairs)
};

/// Least-squares slope of L(t) over the linear phase of a twin error-growth curve, and the
/// window it was fitted over.
struct GrowthFit {
  double rate = 0.0;              // slope of L against t, per time unit (NaN when no window)
  double intercept = 0.0;         // L = intercept + rate t on the fitted line (NaN when none)
  double start = 0.0, end = 0.0;  // first and last t of the window (NaN when none)
  int points = 0;                 // leads in the window (0 when none)
  GrowthOutcome outcome = GrowthOutcome::no_curve;
  std::string note;               // empty when fitted, else why there is no rate (one line)

  /// The twins do not separate: the curve shows no significant sustained rise.
  bool not_separating() const {
    return outcome == GrowthOutcome::no_rise || outcome == GrowthOutcome::not_sustained;
  }
};

/// The linear phase of a mean log separation curve L(t_k), k = 0 .. n-1 (t increasing), whose
/// standard errors are se_k (the across-pair standard deviation over sqrt(pairs)):
///
/// 1. Window: with L0 = L(t_0) and R = max_k L - L0 (the rise to saturation), the window runs
///    from the first lead with L >= L0 + kLow R to the first lead with L >= L0 + kHigh R. Below
///    it the separation is still aligning with the fastest-growing direction; above it the
///    growth slows as the separation approaches the size of the attractor.
/// 2. Significance (a one-sided z test at every lead from the window's end to the last lead):
///    L_k - L0 > kRiseSignificance sqrt(se_k^2 + se_0^2). Exponential separation keeps the
///    twins apart once they have separated; on a periodic orbit or a fixed point the curve
///    only oscillates (the separation follows the speed along the orbit) or decays, and falls
///    back to its start, which this test catches however large one swing is.
/// 3. The fit is ordinary least squares of L on t over the window's leads.
///
/// No rate (NaN, with the outcome and a one-line note) when fewer than 3 leads are finite (NaN
/// values of L end the curve), when there is no rise, when it is not significant, or when the
/// window holds fewer than 3 leads.
GrowthFit fit_growth_rate(const std::vector<double>& t, const std::vector<double>& L,
                          const std::vector<double>& se);

constexpr double kGrowthWindowLow = 0.1;   // share of the rise where the window starts
constexpr double kGrowthWindowHigh = 0.7;  // share of the rise where it ends
constexpr double kRiseSignificance = 3.0;  // standard errors (one-sided, about 0.1% each)

/// The lead at which about `share` of the twin pairs would have separated, extrapolated from
/// the linear phase: the pairs' log separations at lead t are taken as normal with mean
/// a + rate t (the fit's line) and standard deviation sd_end sqrt(t / t_end) (diffusive spread
/// of finite-time growth rates, scaled from sd_end, the across-pair standard deviation at the
/// window's end t_end); the lead solves a + rate t - z sd(t) = level, z the normal quantile
/// of `share`, level the mean log threshold distance. NaN without a fitted rate.
double lead_for_share(const GrowthFit& fit, double sd_end, double level, double share);

}  // namespace chaosweep::stats
