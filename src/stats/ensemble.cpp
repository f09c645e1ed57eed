// Ensemble estimates: Welford/Chan moments and the Student-t interval of the ensemble mean.
#include "stats/ensemble.hpp"

#include <gsl/gsl_cdf.h>

#include <cmath>
#include <limits>

namespace chaosweep::stats {
namespace {
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
}

// Welford (1962) Technometrics 4, 419: with delta = x - mean_old,
//   n <- n + 1,  mean <- mean_old + delta / n,  m2 <- m2 + delta (x - mean_new).
void Moments::add(double x) {
  n += 1.0;
  const double delta = x - mean;
  mean += delta / n;
  m2 += delta * (x - mean);
}

// Chan, Golub & LeVeque (1983) Am. Stat. 37, 242: for parts a and b with n = na + nb and
// delta = mean_b - mean_a,
//   mean = mean_a + delta nb / n,  m2 = m2_a + m2_b + delta^2 na nb / n.
void Moments::merge(const Moments& other) {
  if (other.n == 0.0) return;
  if (n == 0.0) {
    *this = other;
    return;
  }
  const double total = n + other.n;
  const double delta = other.mean - mean;
  mean += delta * (other.n / total);
  m2 += other.m2 + delta * delta * (n * other.n / total);
  n = total;
}

double Moments::variance() const { return n < 2.0 ? kNaN : m2 / (n - 1.0); }

double Moments::stddev() const { return std::sqrt(variance()); }

double student_t975(double dof) {
  if (!(dof >= 1.0)) return kNaN;
  return gsl_cdf_tdist_Pinv(0.975, dof);
}

// 95% interval of the ensemble mean: mean +- t_{0.975, n-1} s / sqrt(n).
EnsembleEstimate estimate(const Moments& m) {
  EnsembleEstimate e;
  e.n = static_cast<std::int64_t>(m.n);
  e.mean = m.n > 0.0 ? m.mean : kNaN;
  e.std = m.stddev();
  const double half_width = student_t975(m.n - 1.0) * e.std / std::sqrt(m.n);
  e.ci_low = e.mean - half_width;  // NaN when n < 2 (std and t are NaN)
  e.ci_high = e.mean + half_width;
  return e;
}

}  // namespace chaosweep::stats

