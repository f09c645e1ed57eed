// The survival estimate of twin horizons (stats/survival.hpp) and the per-case check for
// non-chaotic behaviour (stats/dynamics_check.hpp). The survival estimate is also checked
// against an independent computation from the published formulas on synthetic censored
// samples (check_survival.py).
#include <gsl/gsl_cdf.h>
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "stats/dynamics_check.hpp"
#include "stats/survival.hpp"

namespace chaosweep::testing {
namespace {

// Exact: without censoring before the last time, Kaplan-Meier is the empirical survival
// function, S(t_k) = (N - failures up to t_k) / N, and Greenwood's variance reduces to the
// binomial S (1 - S) / N (the sum telescopes: sum d_j / (n_j (n_j - d_j)) = 1/n_{k+1} - 1/N).
TEST(Survival, WithoutEarlyCensoringItIsTheEmpiricalCurve) {
  const std::vector<double> t{1, 2, 3, 4, 5};
  const std::vector<double> events{2, 3, 0, 1, 1};
  const std::vector<double> censored{0, 0, 0, 0, 3};
  const stats::Survival s = stats::kaplan_meier(t, events, censored);
  const double N = 10.0;
  double failed = 0.0;
  for (std::size_t k = 0; k < t.size(); ++k) {
    failed += events[k];
    const double S = (N - failed) / N;
    EXPECT_NEAR(s.survival[k], S, 1e-15) << k;
    EXPECT_NEAR(s.stderr_[k], std::sqrt(S * (1.0 - S) / N), 1e-15) << k;
  }
  // S: 0.8, 0.5, 0.5, 0.4, 0.3; the median is the first time with S <= 1/2.
  EXPECT_EQ(s.median, 2.0);
  // Lower end: first t with S - 1.96 se <= 1/2: at t = 1, 0.8 - 1.96 * 0.1265 = 0.552 > 0.5,
  // so t = 2. Upper end: first t with S + 1.96 se <= 1/2: at t = 5, 0.3 + 1.96 * 0.1449 =
  // 0.584 > 0.5: never, beyond the last time (NaN).
  EXPECT_EQ(s.median_low, 2.0);
  EXPECT_TRUE(std::isnan(s.median_high));
}

// Exact: nobody fails, so S stays 1 with no error and there is no median.
TEST(Survival, NoFailuresNoMedian) {
  const stats::Survival s = stats::kaplan_meier({1, 2}, {0, 0}, {0, 4});
  EXPECT_EQ(s.survival[1], 1.0);
  EXPECT_EQ(s.stderr_[1], 0.0);
  EXPECT_TRUE(std::isnan(s.median));
  EXPECT_TRUE(std::isnan(s.median_low));
  const stats::Survival none = stats::kaplan_meier({1, 2}, {0, 0}, {0, 0});
  EXPECT_TRUE(std::isnan(none.survival[0]));
}

// Exact: failure times drawn from a normal law N(50, 10^2) (counts on a grid of 0.1 from
// N = 1e6 units, GSL's normal CDF) and censored at T = 60. The two-point normal fit of the
// observed curve recovers the law, so the time by which 90% fail is 50 + 1.2815516 * 10 =
// 62.8155 (Gaussian 0.9 quantile, GSL), to the grid's resolution (0.1 in t_a, which moves
// sigma by about 1%: tolerance 0.3).
TEST(Survival, TimeForShareExtrapolatesTheObservedCurve) {
  std::vector<double> t, events, censored;
  const double N = 1e6;
  double previous = 0.0, total = 0.0;
  for (int k = 0; k <= 600; ++k) {
    t.push_back(0.1 * k);
    const double cdf = gsl_cdf_ugaussian_P((t.back() - 50.0) / 10.0);
    events.push_back(std::round(N * cdf) - std::round(N * previous));
    previous = cdf;
    total += events.back();
    censored.push_back(0.0);
  }
  censored.back() = N - total;
  const stats::Survival s = stats::kaplan_meier(t, events, censored);
  EXPECT_NEAR(stats::time_for_share(t, events, s, 0.9), 62.8155, 0.3);
  EXPECT_FALSE(stats::survival_levelled_off(t, events));
  // Stop every failure after t = 40 (a quarter of the window before its end is 45): levelled.
  for (std::size_t k = 401; k < t.size(); ++k) {
    censored.back() += events[k];
    events[k] = 0.0;
  }
  EXPECT_TRUE(stats::survival_levelled_off(t, events));
  EXPECT_TRUE(std::isnan(
      stats::time_for_share(t, events, stats::kaplan_meier(t, events, censored), 0.9)));
}

/// Evidence of a case with three observables whose members behave like independent chaotic
/// members: across-member spread about equal to their own errors.
stats::CaseEvidence chaotic_case() {
  stats::CaseEvidence e;
  e.valid_members = 64;
  e.time_mean = {0.5, -0.2, 23.0};
  e.across_std = {0.8, 0.9, 0.2};
  e.member_stderr_rms = {0.7, 0.75, 0.18};
  e.within_variance = {60.0, 70.0, 75.0};
  e.leading_exponent = 0.9;
  e.exponent_tolerance = stats::exponent_tolerance(100.0);
  return e;
}

// The tests' thresholds, exact by construction of the evidence (dynamics_check.hpp).
TEST(DynamicsCheck, FlagsEachSignOfNonChaoticBehaviour) {
  EXPECT_EQ(stats::exponent_tolerance(100.0), 0.02);
  EXPECT_EQ(stats::exponent_tolerance(1000.0), 0.01);
  const stats::CaseVerdict chaotic = stats::check_dynamics(chaotic_case());
  EXPECT_FALSE(chaotic.non_chaotic) << chaotic.reason;
  EXPECT_TRUE(chaotic.reason.empty());

  stats::CaseEvidence e = chaotic_case();
  e.leading_exponent = 0.0012;
  stats::CaseVerdict v = stats::check_dynamics(e);
  EXPECT_TRUE(v.non_chaotic);
  EXPECT_FALSE(v.collapsed);
  EXPECT_NE(v.reason.find("leading Lyapunov exponent 0.0012"), std::string::npos) << v.reason;

  e = chaotic_case();
  e.across_std = {0.05, 0.06, 0.01};  // ratios 0.071, 0.08, 0.056: all below 0.1
  v = stats::check_dynamics(e);
  EXPECT_TRUE(v.collapsed);
  EXPECT_NE(v.reason.find("coincide"), std::string::npos) << v.reason;
  e.across_std[1] = 0.08;  // ratio 0.107 for one observable: not collapsed
  EXPECT_FALSE(stats::check_dynamics(e).collapsed);
  e.valid_members = 7;  // too few members for the ratio test
  e.across_std = {0.05, 0.06, 0.01};
  EXPECT_FALSE(stats::check_dynamics(e).collapsed);
  e.across_std = {1e-6, 1e-6, 1e-6};  // below 1e-4 of each observable's size: any count
  EXPECT_TRUE(stats::check_dynamics(e).collapsed);

  e = chaotic_case();
  e.member_stderr_rms = {NAN, NAN, NAN};  // a window too short for the members' errors
  EXPECT_FALSE(stats::check_dynamics(e).non_chaotic);

  e = chaotic_case();
  e.within_variance = {1e-14, 1e-14, 1e-10};  // below 1e-12 of 0.25, 0.04 and 529
  v = stats::check_dynamics(e);
  EXPECT_NE(v.reason.find("fixed point"), std::string::npos) << v.reason;
  e.within_variance[2] = 1e-8;  // above 1e-12 * 529
  EXPECT_EQ(stats::check_dynamics(e).reason.find("fixed point"), std::string::npos);

  e = chaotic_case();
  e.twins_not_separating = true;
  e.twin_note = "no rise";
  v = stats::check_dynamics(e);
  EXPECT_TRUE(v.non_chaotic);
  EXPECT_NE(v.reason.find("the twins do not separate: no rise"), std::string::npos);
}

}  // namespace
}  // namespace chaosweep::testing
