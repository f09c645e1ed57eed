// The twin experiment of one case from its merged partials (see twin_summary.hpp).
#include "stats/twin_summary.hpp"

#include <algorithm>
#include <cmath>

#include "stats/error_growth.hpp"
#include "stats/survival.hpp"

namespace chaosweep::stats {

TwinSummary summarise_twins(const std::vector<double>& lead, const TwinPartials& t, double most) {
  const std::size_t leads = lead.size();
  TwinSummary out;
  std::vector<double> mean(leads), se(leads);
  out.log_separation.assign(leads, NAN);
  out.log_separation_std.assign(leads, NAN);
  for (std::size_t k = 0; k < leads; ++k) {
    const Moments& m = t.separation[k];
    mean[k] = m.n > 0.0 ? m.mean : NAN;
    se[k] = m.stddev() / std::sqrt(m.n);
    out.log_separation[k] = mean[k];
    out.log_separation_std[k] = m.stddev();
  }
  out.pairs = static_cast<std::int64_t>(t.separation[0].n);
  const GrowthFit fit = fit_growth_rate(lead, mean, se);
  out.growth_rate = fit.rate;
  out.window_first = fit.start;
  out.window_last = fit.end;
  out.growth_note = fit.note;
  out.not_separating = out.pairs > 1 && fit.not_separating();

  out.horizon = estimate(t.horizon);

  std::vector<double> censored(leads, 0.0);
  censored[leads - 1] = t.unseparated;  // pairs not separated by the last lead
  const Survival s = kaplan_meier(lead, t.separated, censored);
  out.unseparated_fraction = s.survival;
  out.median = s.median;
  out.median_low = s.median_low;
  out.median_high = s.median_high;

  // Fewer than `most` separated: the lead by which about that share would, from the survival
  // curve (or, with too few separated for it, from the fitted growth); NaN where the curve has
  // levelled off.
  out.suggested_duration = NAN;
  const double pairs = static_cast<double>(out.pairs);
  if (pairs > 0.0 && static_cast<double>(out.horizon.n) < most * pairs) {
    double duration = time_for_share(lead, t.separated, s, most);
    const double separated = static_cast<double>(out.horizon.n) / pairs;
    if (std::isnan(duration) && separated < kMinShareForFit &&
        !survival_levelled_off(lead, t.separated)) {
      const std::size_t end = static_cast<std::size_t>(
          std::find(lead.begin(), lead.end(), fit.end) - lead.begin());
      const double sd_end = end < leads ? t.separation[end].stddev() : NAN;
      duration = lead_for_share(fit, sd_end, t.level.n > 0.0 ? t.level.mean : NAN, most);
      if (!(duration > lead.back())) duration = NAN;
    }
    out.suggested_duration = duration;
  }
  return out;
}

}  // namespace chaosweep::stats
