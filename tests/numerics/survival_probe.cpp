// Test helper: reads lines "t events censored" (times increasing) from standard input and
// prints stats::kaplan_meier's result, one line per time "t S se", then "median M LOW HIGH"
// (nan where undefined), each number to 17 significant digits. Used by check_survival.py.
#include <cstdio>
#include <vector>

#include "stats/survival.hpp"

int main() {
  std::vector<double> t, events, censored;
  double a = 0.0, b = 0.0, c = 0.0;
  while (std::scanf("%lf %lf %lf", &a, &b, &c) == 3) {
    t.push_back(a);
    events.push_back(b);
    censored.push_back(c);
  }
  const chaosweep::stats::Survival s = chaosweep::stats::kaplan_meier(t, events, censored);
  for (std::size_t k = 0; k < t.size(); ++k) {
    std::printf("%.17g %.17g %.17g\n", t[k], s.survival[k], s.stderr_[k]);
  }
  std::printf("median %.17g %.17g %.17g\n", s.median, s.median_low, s.median_high);
  return 0;
}
