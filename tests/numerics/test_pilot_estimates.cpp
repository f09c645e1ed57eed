// Planning figures of the pilot (stats/pilot_estimates.hpp): the ensemble decorrelation-time
// estimator on AR(1) ensembles, the paired difference, the flag threshold and the members /
// duration arithmetic against Student-t quantiles from outside the project.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <random>
#include <vector>

#include "stats/ensemble.hpp"
#include "stats/pilot_estimates.hpp"

namespace chaosweep::stats {
namespace {

/// Time means and n-1 time variances of `members` stationary AR(1) series
/// x_t = phi x_{t-1} + e_t (e_t standard normal, x_0 drawn from the stationary law
/// N(0, 1 / (1 - phi^2))), each `steps` long.
struct Ar1Ensemble {
  std::vector<double> means, variances;
};
Ar1Ensemble ar1_ensemble(double phi, int members, int steps, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> noise(0.0, 1.0);
  Ar1Ensemble e;
  for (int m = 0; m < members; ++m) {
    double x = noise(rng) / std::sqrt(1.0 - phi * phi);
    Moments time;
    for (int t = 0; t < steps; ++t) {
      time.add(x);
      x = phi * x + noise(rng);
    }
    e.means.push_back(time.mean);
    e.variances.push_back(time.variance());
  }
  return e;
}

// Published: for AR(1) the integrated autocorrelation time is tau_int = 1/2 + sum_{k>=1} phi^k
// = (1 + phi) / (2 (1 - phi)) steps (Sokal 1997, NATO ASI B 361, 131), and the mean of n steps
// has variance 2 tau_int sigma^2 / n for n >> tau_int; phi 0.9 gives 9.5.
// Tolerance 8%: with 4000 members Var_m has a relative standard error sqrt(2/3999) = 2.2%
// (chi-square), so 8% is 3.6 standard errors, plus the estimator's own O(tau/n) bias, under 1%
// with n = 200 tau_int (exact finite-n variance of an AR(1) mean: the correction is
// 2 phi / (n (1 - phi^2)) relative; the n-1 time variance is low by about 2 tau_int / n).
TEST(Decorrelation, Ar1EnsembleGivesSokalsTau) {
  for (double phi : {0.0, 0.5, 0.9, 0.99}) {
    const double tau_int = (1.0 + phi) / (2.0 * (1.0 - phi));
    const int steps = static_cast<int>(std::max(300.0, 200.0 * tau_int));
    const Ar1Ensemble e = ar1_ensemble(phi, 4000, steps, 20261202);
    const Decorrelation d = decorrelation_time(e.means, e.variances, steps);
    EXPECT_NEAR(d.tau, tau_int, 0.08 * tau_int) << "phi " << phi;
    EXPECT_EQ(d.members, 4000);
    // Exact: the stationary variance of AR(1) is 1 / (1 - phi^2); s2 is an average over
    // 4000 x steps samples, so 3% covers its sampling error (about 1% for phi 0.99).
    EXPECT_NEAR(d.time_variance, 1.0 / (1.0 - phi * phi), 0.03 / (1.0 - phi * phi));
    // Time units: the same window in units of dt = 0.01 gives tau in those units (exact).
    const Decorrelation scaled = decorrelation_time(e.means, e.variances, steps * 0.01);
    EXPECT_NEAR(scaled.tau, d.tau * 0.01, 1e-12 * d.tau);
  }
}

// Common practice: a 95% interval covers the true value in about 95% of repeats. 400 pilots of
// 32 members (phi 0.5, 300 steps): the binomial standard error of the coverage is 1.1%, so
// [0.91, 0.99] is about 3.6 standard errors; the O(tau/n) bias (1%) shifts coverage little.
TEST(Decorrelation, IntervalCoversAtAboutNinetyFivePercent) {
  const double tau_int = 1.5;  // phi 0.5
  int covered = 0;
  for (int repeat = 0; repeat < 400; ++repeat) {
    const Ar1Ensemble e = ar1_ensemble(0.5, 32, 300, 1000 + repeat);
    const Decorrelation d = decorrelation_time(e.means, e.variances, 300);
    covered += d.tau_low <= tau_int && tau_int <= d.tau_high;
  }
  EXPECT_GE(covered, 364);
  EXPECT_LE(covered, 396);
}

// Exact: non-finite members are skipped; fewer than two give NaN.
TEST(Decorrelation, NonFiniteMembersAreSkipped) {
  const double nan = std::nan("");
  const Decorrelation d = decorrelation_time({1.0, nan, 3.0}, {2.0, 2.0, nan}, 10.0);
  EXPECT_EQ(d.members, 1);
  EXPECT_TRUE(std::isnan(d.tau));
  const Decorrelation two = decorrelation_time({1.0, nan, 3.0, 5.0}, {2.0, 2.0, 4.0, 6.0}, 10.0);
  EXPECT_EQ(two.members, 3);
  // Var_m of {1, 3, 5} is 4, s2 = (2 + 4 + 6) / 3 = 4: tau = 10 * 4 / (2 * 4) = 5.
  EXPECT_DOUBLE_EQ(two.tau, 5.0);
  EXPECT_DOUBLE_EQ(two.variance_time(), 40.0);
}

// Exact, by hand: a = {1, 2, 3, 4}, b = {0.5, 2.5, 2, 3}: d = {0.5, -0.5, 1, 1}, mean 0.5,
// squared deviations 0 + 1 + 0.25 + 0.25 = 1.5, s^2 = 0.5, se = sqrt(0.5) / 2. The NaN pair is
// left out.
TEST(PairedDifference, HandComputed) {
  const PairedDifference p =
      paired_difference({1.0, 2.0, std::nan(""), 3.0, 4.0}, {0.5, 2.5, 1.0, 2.0, 3.0});
  EXPECT_EQ(p.n, 4);
  EXPECT_DOUBLE_EQ(p.difference, 0.5);
  EXPECT_DOUBLE_EQ(p.mean_a, 2.5);
  EXPECT_DOUBLE_EQ(p.mean_b, 2.0);
  EXPECT_NEAR(p.stderr_, std::sqrt(0.5) / 2.0, 1e-15);
}

// Reference values from scipy 1.10 (scipy.stats.t.ppf), computed when this test was written:
// t.ppf(0.995, 31) = 2.7440419192941268, t.ppf(1 - 0.005/9, 31) = 3.5945326559600903 (family-
// wise 1% over 1 and 9 comparisons). GSL's inversion agrees far better than the 1e-9 allowed.
TEST(FlagThreshold, BonferroniStudentT) {
  EXPECT_NEAR(flag_threshold(1, 32), 2.7440419192941268, 1e-9);
  EXPECT_NEAR(flag_threshold(9, 32), 3.5945326559600903, 1e-9);
  EXPECT_TRUE(std::isnan(flag_threshold(3, 1)));
}

// Members needed: the smallest n with t_{0.975,n-1} sqrt(W / (n T)) <= X.
// Published (standard t tables, recalled from memory; scipy 1.10 gives 2.1199 and 2.1098):
// t_{0.975,16} = 2.120 and t_{0.975,17} = 2.110, so with W/T = 1 and X = 0.5, n = 17 gives
// 2.120 / sqrt(17) = 0.514 > 0.5 and n = 18 gives 2.110 / sqrt(18) = 0.497: n = 18.
// The other two cases were found by scipy 1.10 by scanning n upwards from 2 with
// scipy.stats.t.ppf(0.975, n - 1) (computed when this test was written).
TEST(MembersNeeded, MatchesStudentTScan) {
  EXPECT_EQ(members_needed(1.0, 1.0, 0.5), 18);
  EXPECT_EQ(members_needed(3.7, 2.0, 0.11), 590);
  EXPECT_EQ(members_needed(50.0, 10.0, 0.05), 7686);
  // The result meets the target and one member fewer does not (exact, by definition).
  const std::int64_t n = members_needed(50.0, 10.0, 0.05);
  EXPECT_LE(mean_halfwidth(50.0, n, 10.0), 0.05);
  EXPECT_GT(mean_halfwidth(50.0, n - 1, 10.0), 0.05);
  // Published: the normal quantile 1.959964 (A&S 26.2) bounds n from below, and for large n the
  // t and normal answers differ by about (z^2 + 1) / 2 + 1 members (a few), so within 0.01%.
  const double z = 1.959964;
  const double normal = z * z * 4.0e4 / (1.0 * 0.1 * 0.1);
  const std::int64_t big = members_needed(4.0e4, 1.0, 0.1);
  EXPECT_GE(static_cast<double>(big), normal);
  EXPECT_NEAR(static_cast<double>(big), normal, 1e-4 * normal);
  EXPECT_EQ(members_needed(1.0, 1.0, 0.0), -1);
  EXPECT_EQ(members_needed(std::nan(""), 1.0, 0.5), -1);
  EXPECT_EQ(members_needed(1e30, 1.0, 1e-10), -1);
}

// Duration needed: T = t_{0.975,n-1}^2 W / (n X^2). scipy 1.10: t.ppf(0.975, 9) =
// 2.2621571627409915, so W = 1, n = 10, X = 0.5 need T = 2.2621571627409915^2 / 2.5. The
// half-width at that T is X again (exact identity; 1e-12 for rounding).
TEST(DurationNeeded, MatchesStudentT) {
  const double t = 2.2621571627409915;
  EXPECT_NEAR(duration_needed(1.0, 10, 0.5), t * t / 2.5, 1e-9);
  EXPECT_NEAR(mean_halfwidth(7.3, 64, duration_needed(7.3, 64, 0.02)), 0.02, 1e-12);
  EXPECT_TRUE(std::isnan(duration_needed(1.0, 1, 0.5)));
}

/// Mean and n-1 variance of x(t) = c + A sin(w t + phase) sampled at t_k = k h, k = 1 .. n
/// (the pilot's samples: the end of every step of a window starting at t = 0).
Moments sampled_sinusoid(double c, double amplitude, double w, double phase, double h, int n) {
  Moments m;
  for (int k = 1; k <= n; ++k) m.add(c + amplitude * std::sin(w * k * h + phase));
  return m;
}

// Exact: a periodic orbit that every member follows gives the same time mean at dt and dt/2
// except for where the samples fall: the dt/2 samples are the dt ones plus the midpoints, so the
// means differ by (1/2N) sum_k [x(k dt) - x((k - 1/2) dt)]. Taylor expansion of each bracket
// and the Euler-Maclaurin sums of x' and x'' give
//   dt (x(T) - x(0)) / (4T) + dt^2 (x'(T) - x'(0)) / (16T) + O(dt^3 x^(3) / T).
// For a sinusoid |x(T) - x(0)| <= 2A = 2 sqrt(2) sd, so the floor's dt sd / T covers the
// leading term by a factor sqrt(2) at any phase and window, and the next is at most w dt / 4
// of that bound (0.015 here). Checked on sampled sinusoids computed here, with the expansion to
// dt^3 w^2 A / T, which bounds its third-order remainder for a sinusoid with room.
TEST(DtChangeFloor, CoversTheSamplingOfOneWindowAtTwoStepSizes) {
  int checked = 0;
  for (double w : {0.9, 2.0 * M_PI / 7.03, 6.0}) {
    for (double phase : {0.0, 0.4, 1.3, 2.9, 4.4}) {
      for (double window : {37.3, 100.0, 251.9}) {
        for (double h : {0.01, 0.005}) {
          const int n = static_cast<int>(std::llround(window / h));
          const double t = n * h;
          const Moments coarse = sampled_sinusoid(0.7, 1.3, w, phase, h, n);
          const Moments fine = sampled_sinusoid(0.7, 1.3, w, phase, h / 2, 2 * n);
          const double difference = coarse.mean - fine.mean;
          const double change = 1.3 * (std::sin(w * t + phase) - std::sin(phase));
          const double slope_change = 1.3 * w * (std::cos(w * t + phase) - std::cos(phase));
          const double expansion = h * change / (4.0 * t) + h * h * slope_change / (16.0 * t);
          EXPECT_NEAR(difference, expansion, h * h * h * w * w * 1.3 / t) << w << " " << phase;
          EXPECT_LE(std::abs(difference), dt_change_floor(coarse.mean, coarse.variance(), h, t))
              << "w " << w << " phase " << phase << " T " << t << " dt " << h;
          ++checked;
        }
      }
    }
  }
  EXPECT_EQ(checked, 90);
  // The relative term: a millionth of the root-mean-square size (exact arithmetic), here with
  // no time variation (a fixed point at -7.4, where the window term vanishes).
  EXPECT_DOUBLE_EQ(dt_change_floor(-7.4, 0.0, 0.01, 100.0), 7.4e-6);
}

// Exact: members that sample the same stationary law independently have, at any one time, the
// law's variance across members, which is also each member's time variance; so their "together"
// ratio is near 1 (here 256 independent AR(1) members: its sampling error is ~5%, 0.7 - 1.3
// leaves over 5 standard errors). Members that are one series plus 1e-9 offsets move as one;
// constant members rest. The classes follow the thresholds of the header.
TEST(CaseBehaviour, IndependentTogetherAndResting) {
  const Ar1Ensemble e = ar1_ensemble(0.9, 256, 2000, 7);
  Moments mean, variance, end;
  std::mt19937_64 rng(11);
  std::normal_distribution<double> law(0.0, 1.0 / std::sqrt(1.0 - 0.81));
  for (std::size_t m = 0; m < e.means.size(); ++m) {
    mean.add(e.means[m]);
    variance.add(e.variances[m]);
    end.add(law(rng));  // an independent draw of each member's state at the end
  }
  BehaviourEvidence independent;
  add_evidence(independent, mean.mean + 3.0, variance.mean, end.variance());
  EXPECT_GT(independent.together, 0.7);
  EXPECT_LT(independent.together, 1.3);
  independent.growth = 5000.0;
  EXPECT_EQ(classify(independent), CaseBehaviour::chaotic);
  independent.growth = 2.0;  // started as far apart as they end: chaos not seen
  EXPECT_EQ(classify(independent), CaseBehaviour::independent);

  BehaviourEvidence together;
  add_evidence(together, 0.7, 0.5, 1e-18);
  add_evidence(together, 0.5, 0.6, 2e-18);
  together.growth = 4.0;
  EXPECT_LT(together.together, 1e-8);
  EXPECT_EQ(classify(together), CaseBehaviour::together);

  BehaviourEvidence resting;
  add_evidence(resting, -7.4, 1e-28, 1e-30);
  add_evidence(resting, 23.0, 0.0, 0.0);
  EXPECT_LT(resting.rest, 1e-13);
  EXPECT_EQ(classify(resting), CaseBehaviour::fixed_point);
}

}  // namespace
}  // namespace chaosweep::stats
