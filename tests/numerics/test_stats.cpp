// Statistics tests: one-pass and merged moments, the blocked time-moment accumulator, regime
// accounting, histograms, Student-t quantiles, ensemble estimates and response slopes.
#include <gsl/gsl_statistics_double.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <random>
#include <vector>

#include "stats/ensemble.hpp"
#include "stats/histogram.hpp"
#include "stats/regimes.hpp"
#include "stats/time_moments.hpp"

namespace chaosweep::stats {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Corrected two-pass mean and sum of squared deviations in extended precision: the accurate
/// reference (common practice; Chan, Golub & LeVeque 1983 discuss the corrected form
/// m2 = sum d^2 - (sum d)^2 / n with d = x - mean).
Moments two_pass(const std::vector<double>& v) {
  const long double n = static_cast<long double>(v.size());
  long double sum = 0.0L;
  for (double x : v) sum += x;
  long double mean = sum / n;
  long double sd = 0.0L, sd2 = 0.0L;
  for (double x : v) {
    sd += x - mean;
    sd2 += (x - mean) * (x - mean);
  }
  Moments m;
  m.n = static_cast<double>(v.size());
  m.mean = static_cast<double>(mean + sd / n);
  m.m2 = static_cast<double>(sd2 - sd * sd / n);
  return m;
}

// ---- moments --------------------------------------------------------------------------------

// Exact: {4, 7, 13, 16} has mean 10 and squared deviations 36 + 9 + 9 + 36 = 90, so s^2 = 30;
// a shift by 1e9 leaves it unchanged. The one-pass update is Welford (1962) Technometrics 4,
// 419. Every input and every Welford intermediate is exactly representable here, so 1e-12
// relative is generous. The naive sum-of-squares formula, in the same test, loses everything:
// sum x^2 ~ 4e18 has an ulp of 512.
TEST(Moments, WelfordSurvivesALargeOffset) {
  Moments m;
  double sum = 0.0, sum_sq = 0.0;
  for (double x : {4.0, 7.0, 13.0, 16.0}) {
    m.add(1e9 + x);
    sum += 1e9 + x;
    sum_sq += (1e9 + x) * (1e9 + x);
  }
  EXPECT_NEAR(m.variance(), 30.0, 30.0 * 1e-12);
  EXPECT_NEAR(m.mean, 1e9 + 10.0, 1e-6);
  const double naive = (sum_sq - sum * sum / 4.0) / 3.0;
  EXPECT_GT(std::abs(naive - 30.0), 1.0) << "the naive formula should fail here";
}

TEST(Moments, SmallCountsGiveNaN) {
  Moments m;
  EXPECT_TRUE(std::isnan(m.variance()));
  m.add(3.0);
  EXPECT_TRUE(std::isnan(m.variance()));
  EXPECT_EQ(m.mean, 3.0);
}

// Published (Chan, Golub & LeVeque 1983, Am. Stat. 37, 242): merging partial moments with
// M2 = M2a + M2b + delta^2 na nb / n gives the moments of the union, for any split and any
// merge order; equal to the two-pass result to 1e-12 relative (REFERENCES.md). The data have
// condition number kappa = |mean| / sd ~ 33, so the error bound of the updating formulas in
// that paper, about n eps kappa = 200 * 1.1e-16 * 33 = 7e-13, lies within the tolerance.
TEST(Moments, ChanMergeEqualsTwoPassForAnySplitAndOrder) {
  std::mt19937_64 gen(2024);
  std::normal_distribution<double> noise(0.0, 3.0);
  std::vector<double> data(200);
  for (double& x : data) x = 100.0 + noise(gen);
  const Moments ref = two_pass(data);
  for (int trial = 0; trial < 50; ++trial) {
    // random cut points -> parts, each accumulated with add(), merged in a random order
    std::vector<std::size_t> cuts = {0, data.size()};
    for (int c = 0; c < 1 + trial % 7; ++c) cuts.push_back(gen() % data.size());
    std::sort(cuts.begin(), cuts.end());
    std::vector<Moments> parts;
    for (std::size_t p = 0; p + 1 < cuts.size(); ++p) {
      Moments part;
      for (std::size_t i = cuts[p]; i < cuts[p + 1]; ++i) part.add(data[i]);
      parts.push_back(part);  // may be empty: merge must handle n == 0
    }
    std::shuffle(parts.begin(), parts.end(), gen);
    Moments total;
    for (const Moments& p : parts) total.merge(p);
    EXPECT_EQ(total.n, ref.n);
    EXPECT_NEAR(total.mean, ref.mean, 1e-12 * std::abs(ref.mean));
    EXPECT_NEAR(total.m2, ref.m2, 1e-12 * ref.m2);
  }
}

// ---- time moments accumulator ---------------------------------------------------------------

// Common practice (corrected two-pass reference in extended precision): the blocked
// shifted-sum accumulator equals the two-pass mean and variance of a long series (400 000
// steps, 2 series x 4 members) riding on a large offset 1e8 (kappa = |mean| / sd ~ 3e7).
// Tolerances: the mean is returned as K0 + (mean - K0), so one rounding to the ulp of the mean
// remains (the relative part is an O(5) number known to ~1e-14): 2 ulp, 4.4e-16 relative.
// The deviations from the shifts are exact (Sterbenz), so the variance sees only the rounding
// of O(1) sums over blocks of 256 merged 1563 times: 1e-12 relative. The naive formula on the
// same data is off by more than 1e-3 relative.
TEST(TimeMoments, MatchesTwoPassOnALongOffsetSeries) {
  const int series = 2, width = 4;
  const long steps = 400000;
  std::mt19937_64 gen(7);
  std::normal_distribution<double> noise(0.0, 1.0);
  std::vector<std::vector<double>> history(series * width);
  TimeMoments acc(series, width);
  std::vector<double> values(series * width);
  std::vector<const double*> columns(series);
  for (int s = 0; s < series; ++s) columns[s] = values.data() + s * width;
  for (long t = 0; t < steps; ++t) {
    for (int s = 0; s < series; ++s) {
      for (int m = 0; m < width; ++m) {
        const double v = 1e8 * (s + 1) + 5.0 * std::sin(1e-3 * t * (m + 1)) + noise(gen);
        values[s * width + m] = v;
        history[s * width + m].push_back(v);
      }
    }
    acc.add(columns.data());
  }
  EXPECT_EQ(acc.count(), steps);
  for (int s = 0; s < series; ++s) {
    for (int m = 0; m < width; ++m) {
      const std::vector<double>& h = history[s * width + m];
      const Moments ref = two_pass(h);
      const Moments got = acc.moments(s, m);
      EXPECT_EQ(got.n, ref.n);
      EXPECT_NEAR(got.mean, ref.mean, 4.4e-16 * std::abs(ref.mean));
      EXPECT_NEAR(got.variance(), ref.m2 / (ref.n - 1), 1e-12 * ref.m2 / (ref.n - 1));
      double sum = 0.0, sum_sq = 0.0;
      for (double v : h) {
        sum += v;
        sum_sq += v * v;
      }
      const double naive = (sum_sq - sum * sum / ref.n) / (ref.n - 1);
      EXPECT_GT(std::abs(naive / (ref.m2 / (ref.n - 1)) - 1.0), 1e-3) << "naive should fail";
    }
  }
}

// Exact by construction: a partial block is included; one sample gives n = 1 and NaN variance.
TEST(TimeMoments, PartialBlocksAndSingleSamples) {
  TimeMoments acc(1, 2, 4);
  const double a[2] = {1.0, 10.0}, b[2] = {3.0, 10.0};
  const double* ca[1] = {a};
  const double* cb[1] = {b};
  acc.add(ca);
  EXPECT_EQ(acc.moments(0, 0).n, 1.0);
  EXPECT_TRUE(std::isnan(acc.moments(0, 0).variance()));
  for (int i = 0; i < 3; ++i) acc.add(cb);  // completes a block of 4
  acc.add(ca);                               // starts the next one
  // member 0: {1, 3, 3, 3, 1}: mean 11/5, m2 = sum (x - 2.2)^2 = 2*1.44 + 3*0.64 = 4.8
  EXPECT_NEAR(acc.moments(0, 0).mean, 2.2, 1e-15);
  EXPECT_NEAR(acc.moments(0, 0).m2, 4.8, 1e-14);
  EXPECT_EQ(acc.moments(0, 1).m2, 0.0);  // member 1 constant: exactly 0
}

// ---- regimes --------------------------------------------------------------------------------

// Exact by construction (hand-counted series, dt = 0.1). Member 0 values
//   +1 +2 -1 -1 +3 0 -2 -2 -2 +1   -> regimes 0 0 1 1 0 0 1 1 1 0
// regime 0: 5 steps in 3 episodes ({0,1}, {4,5}, {9}: first and last counted);
// regime 1: 5 steps in 2 episodes; 4 transitions; mean residence 5/3 * 0.1 and 5/2 * 0.1.
// Member 1 never leaves regime 0: fraction 1, one episode of 10 steps, regime 1 never visited
// (NaN residence), no transition.
TEST(Regimes, HandCountedSignSeries) {
  const std::vector<double> m0 = {1, 2, -1, -1, 3, 0, -2, -2, -2, 1};
  const double dt = 0.1;
  RegimeCounter counter(2, 2);
  for (std::size_t t = 0; t < m0.size(); ++t) {
    const double v[2] = {m0[t], 4.0};
    int regime[2];
    classify_sign(v, 2, regime);
    counter.add(regime);
  }
  EXPECT_EQ(counter.steps(), 10);
  EXPECT_EQ(counter.fraction(0, 0), 0.5);
  EXPECT_EQ(counter.fraction(1, 0), 0.5);
  EXPECT_EQ(counter.episodes(0, 0), 3);
  EXPECT_EQ(counter.episodes(1, 0), 2);
  EXPECT_EQ(counter.transitions(0), 4);
  EXPECT_DOUBLE_EQ(counter.mean_residence(0, 0, dt), 5.0 / 3.0 * dt);
  EXPECT_DOUBLE_EQ(counter.mean_residence(1, 0, dt), 5.0 / 2.0 * dt);
  EXPECT_EQ(counter.fraction(0, 1), 1.0);
  EXPECT_EQ(counter.fraction(1, 1), 0.0);
  EXPECT_EQ(counter.episodes(0, 1), 1);
  EXPECT_DOUBLE_EQ(counter.mean_residence(0, 1, dt), 10 * dt);
  EXPECT_TRUE(std::isnan(counter.mean_residence(1, 1, dt)));
  EXPECT_EQ(counter.transitions(1), 0);
}

// Exact by construction: nearest centroid in the plane, ties to the lower index.
TEST(Regimes, NearestCentroid) {
  const std::vector<std::vector<double>> centroids = {{-1.0, 0.0}, {1.0, 0.0}, {0.0, 5.0}};
  const double xs[4] = {-0.9, 2.0, 0.0, 0.0};
  const double ys[4] = {0.1, 0.0, 3.0, 0.0};
  int regime[4];
  classify_nearest({xs, ys}, centroids, 4, regime);
  EXPECT_EQ(regime[0], 0);
  EXPECT_EQ(regime[1], 1);
  EXPECT_EQ(regime[2], 2);
  EXPECT_EQ(regime[3], 0);  // equidistant from centroids 0 and 1
}

// ---- histogram ------------------------------------------------------------------------------

// Exact by construction (the convention of histogram.hpp): bin i holds edge_i <= v < edge_i+1;
// low is counted, high is not, values outside [low, high) and NaN are not counted.
TEST(Histogram, EdgeHandling) {
  MemberHistogram h(4, -2.0, 2.0, 1);  // edges -2 -1 0 1 2
  for (double v : {-2.0, -1.0, -0.5, 0.0, 1.9999999, 2.0, -2.0000001, 5.0, kNaN}) h.add(&v);
  EXPECT_EQ(h.count(0, 0), 1);  // -2
  EXPECT_EQ(h.count(0, 1), 2);  // -1, -0.5
  EXPECT_EQ(h.count(0, 2), 1);  // 0
  EXPECT_EQ(h.count(0, 3), 1);  // 1.9999999; 2.0 and the rest not counted
  std::vector<std::int64_t> total(4, 0);
  h.add_member_to(0, total.data());
  EXPECT_EQ(std::accumulate(total.begin(), total.end(), std::int64_t{0}), 5);
}

// Exact by construction: with edges that are not representable (0.1, 0.2, ...) every edge value
// lands in the bin it opens and the double just below it in the previous bin; the double just
// below high is in the last bin and high itself is not counted. So every bin holds exactly 2.
TEST(Histogram, EveryEdgeOpensItsBin) {
  const int bins = 30;
  const double low = 0.0, high = 3.0;
  MemberHistogram h(bins, low, high, 1);
  for (int i = 0; i <= bins; ++i) {
    const double edge = histogram_edge(low, high, bins, i);
    const double below = std::nextafter(edge, -1e300);
    h.add(&edge);
    if (i > 0) h.add(&below);
  }
  EXPECT_EQ(histogram_edge(low, high, bins, bins), high);
  for (int i = 0; i < bins; ++i) EXPECT_EQ(h.count(0, i), 2) << "bin " << i;
}

// Exact by construction, in every lane: 19 members (two SIMD registers and a tail) each see
// every edge, the double just below and above it, values outside [low, high), infinities and
// NaN, in a different order per member; each member's counts equal the definition applied
// value by value (the bin i with edge_i <= v < edge_i+1, found by searching the edges), whether
// the steps come together (a fused kernel's segment) or one at a time.
TEST(Histogram, EveryLaneCountsByTheEdges) {
  const int bins = 30, width = 19;
  const double low = -1.0, high = 2.0;
  std::vector<double> values = {low - 1.0, std::nextafter(low, -1e300), high, 7.5, kNaN,
                                std::numeric_limits<double>::infinity(),
                                -std::numeric_limits<double>::infinity()};
  for (int i = 0; i <= bins; ++i) {
    const double edge = histogram_edge(low, high, bins, i);
    values.insert(values.end(), {edge, std::nextafter(edge, -1e300), std::nextafter(edge, 1e300)});
  }
  const int n = static_cast<int>(values.size());
  const auto bin_of = [&](double v) {  // the definition, by search; -1 when not counted
    for (int i = 0; i < bins; ++i) {
      if (histogram_edge(low, high, bins, i) <= v && v < histogram_edge(low, high, bins, i + 1)) return i;
    }
    return -1;
  };
  std::vector<double> rows(static_cast<std::size_t>(n) * width);  // [step][member]
  std::vector<std::int64_t> expected(static_cast<std::size_t>(width) * bins, 0);
  for (int t = 0; t < n; ++t) {
    for (int m = 0; m < width; ++m) {
      const double v = values[static_cast<std::size_t>((t + 5 * m) % n)];
      rows[static_cast<std::size_t>(t) * width + m] = v;
      const int b = bin_of(v);
      if (b >= 0) ++expected[static_cast<std::size_t>(m) * bins + b];
    }
  }
  MemberHistogram steps(bins, low, high, width), one_by_one(bins, low, high, width);
  steps.add_steps(rows.data(), n);
  for (int t = 0; t < n; ++t) one_by_one.add(rows.data() + static_cast<std::size_t>(t) * width);
  for (int m = 0; m < width; ++m) {
    for (int b = 0; b < bins; ++b) {
      EXPECT_EQ(steps.count(m, b), expected[static_cast<std::size_t>(m) * bins + b]) << m << " " << b;
      EXPECT_EQ(one_by_one.count(m, b), expected[static_cast<std::size_t>(m) * bins + b]) << m << " " << b;
    }
  }
}

// ---- Student t and estimates ----------------------------------------------------------------

// Published (standard t tables; the values are those of Abramowitz & Stegun 1964, ch. 26, as
// recalled from memory): t_{0.975, 10} = 2.228139 and the normal quantile 1.959964 as
// dof -> infinity. Exact: with 1 dof the t distribution is Cauchy, quantile tan(pi (p - 1/2));
// with 2 dof the quantile is (2p - 1) / sqrt(2 p (1 - p)). Tolerances: half a unit of the last
// quoted decimal; at dof = 1e6 the t quantile exceeds the normal one by about
// (z^3 + z) / (4 dof) = 2.4e-6, so 5e-6 there; the closed forms to 1e-9 relative (GSL's
// inversion accuracy is far better).
TEST(StudentT, QuantilesMatchTablesAndClosedForms) {
  EXPECT_NEAR(student_t975(10), 2.228139, 5e-7);
  EXPECT_NEAR(student_t975(1e6), 1.959964, 5e-6);
  const double pi = std::acos(-1.0);
  EXPECT_NEAR(student_t975(1), std::tan(pi * 0.475), 1e-9 * 12.7);
  EXPECT_NEAR(student_t975(2), 0.95 / std::sqrt(2 * 0.975 * 0.025), 1e-9 * 4.3);
  EXPECT_TRUE(std::isnan(student_t975(0.0)));
}

// Exact (definition): mean +- t_{0.975, n-1} s / sqrt(n).
TEST(Estimate, IntervalFromMoments) {
  Moments m;
  for (double x : {2.0, 4.0, 4.0, 5.0, 7.0, 9.0}) m.add(x);
  const EnsembleEstimate e = estimate(m);
  const double half = student_t975(5) * m.stddev() / std::sqrt(6.0);
  EXPECT_EQ(e.n, 6);
  EXPECT_DOUBLE_EQ(e.mean, 31.0 / 6.0);
  EXPECT_DOUBLE_EQ(e.ci_low, e.mean - half);
  EXPECT_DOUBLE_EQ(e.ci_high, e.mean + half);
  Moments one;
  one.add(3.0);
  EXPECT_TRUE(std::isnan(estimate(one).std));
  EXPECT_TRUE(std::isnan(estimate(one).ci_low));
  EXPECT_TRUE(std::isnan(estimate(Moments{}).mean));
}

// ---- response slopes ------------------------------------------------------------------------

/// A 3 x 4 cartesian grid over axes (a, b) plus a constant third axis.
std::vector<std::vector<double>> grid() {
  std::vector<std::vector<double>> x;
  for (double a : {0.0, 0.5, 2.0}) {
    for (double b : {-1.0, 0.0, 1.0, 3.0}) x.push_back({a, b, 7.0});
  }
  return x;
}

/// Independent slope operator for a single regressor: a_c = (x_c - mean x) / sum (x - mean x)^2
/// (exact: the normal equations of y = b0 + b1 x). On a cartesian grid the centred axes are
/// orthogonal, so the same formula holds per axis of the joint fit.
std::vector<double> simple_operator(const std::vector<double>& x) {
  const double mean = std::accumulate(x.begin(), x.end(), 0.0) / x.size();
  double sxx = 0.0;
  for (double v : x) sxx += (v - mean) * (v - mean);
  std::vector<double> a;
  for (double v : x) a.push_back((v - mean) / sxx);
  return a;
}

// Exact: on data y = 2 + 3 a - 0.5 b the least-squares fit recovers the slopes (rounding only,
// 1e-12); the constant axis gives NaN; the standard error equals sqrt(sum a_c^2 se_c^2) with a_c
// computed independently above (1e-12 relative).
TEST(ResponseSlopes, ExactLinearDataAndPropagatedError) {
  const auto x = grid();
  std::vector<double> y, se;
  for (std::size_t c = 0; c < x.size(); ++c) {
    y.push_back(2.0 + 3.0 * x[c][0] - 0.5 * x[c][1]);
    se.push_back(0.1 + 0.05 * c);
  }
  const std::vector<Slope> s = response_slopes(x, y, se);
  ASSERT_EQ(s.size(), 3u);
  EXPECT_NEAR(s[0].slope, 3.0, 1e-12);
  EXPECT_NEAR(s[1].slope, -0.5, 1e-12);
  EXPECT_TRUE(std::isnan(s[2].slope));
  EXPECT_TRUE(std::isnan(s[2].stderr_));
  for (int k = 0; k < 2; ++k) {
    std::vector<double> axis;
    for (const auto& row : x) axis.push_back(row[k]);
    const std::vector<double> a = simple_operator(axis);
    double var = 0.0;
    for (std::size_t c = 0; c < a.size(); ++c) var += a[c] * a[c] * se[c] * se[c];
    EXPECT_NEAR(s[k].stderr_, std::sqrt(var), 1e-12 * std::sqrt(var)) << "axis " << k;
  }
}

// Exact: a case with non-finite y is left out; with one axis the fit is simple regression on the
// remaining cases, whose operator is the closed form above.
TEST(ResponseSlopes, NonFiniteCasesAreLeftOut) {
  const std::vector<std::vector<double>> x = {{0.0}, {1.0}, {2.0}, {3.0}, {4.0}};
  const std::vector<double> y = {1.0, 2.5, kNaN, 4.0, 7.0};
  const std::vector<double> se = {0.1, 0.2, 0.3, 0.4, 0.5};
  const std::vector<double> a = simple_operator({0.0, 1.0, 3.0, 4.0});
  const std::vector<double> yk = {1.0, 2.5, 4.0, 7.0}, sek = {0.1, 0.2, 0.4, 0.5};
  double slope = 0.0, var = 0.0;
  for (int c = 0; c < 4; ++c) {
    slope += a[c] * yk[c];
    var += a[c] * a[c] * sek[c] * sek[c];
  }
  const std::vector<Slope> s = response_slopes(x, y, se);
  EXPECT_NEAR(s[0].slope, slope, 1e-12);
  EXPECT_NEAR(s[0].stderr_, std::sqrt(var), 1e-12);
}

// Exact: the second-order difference is exact for a quadratic at every interior point of an
// uneven grid, and the one-sided ends are exact for a straight line (rounding only, 1e-12);
// with even spacing the interior is (f_{i+1} - f_{i-1}) / 2h. The errors are the closed
// forms: sqrt(a^2 s^2 + b^2 s^2 + c^2 s^2) inside, sqrt(2) s / h at an end.
TEST(GradientAlong, ExactForQuadraticsInsideAndLinesAtTheEnds) {
  const std::vector<double> x = {0.0, 0.5, 2.0, 2.25, 4.0};
  std::vector<double> quad, line, se(x.size(), 0.1);
  for (double v : x) {
    quad.push_back(1.0 - 2.0 * v + 0.75 * v * v);
    line.push_back(3.0 - 1.5 * v);
  }
  const std::vector<Slope> dq = gradient_along(x, quad, se);
  for (std::size_t i = 1; i + 1 < x.size(); ++i) {
    EXPECT_NEAR(dq[i].slope, -2.0 + 1.5 * x[i], 1e-12) << "point " << i;
    const double h1 = x[i] - x[i - 1], h2 = x[i + 1] - x[i];
    const double a = -h2 / (h1 * (h1 + h2)), b = (h2 - h1) / (h1 * h2), c = h1 / (h2 * (h1 + h2));
    EXPECT_NEAR(dq[i].stderr_, 0.1 * std::sqrt(a * a + b * b + c * c), 1e-12) << "point " << i;
  }
  const std::vector<Slope> dl = gradient_along(x, line, se);
  for (const Slope& d : dl) EXPECT_NEAR(d.slope, -1.5, 1e-12);
  EXPECT_NEAR(dl[0].stderr_, std::sqrt(2.0) * 0.1 / 0.5, 1e-12);
  EXPECT_NEAR(dl[4].stderr_, std::sqrt(2.0) * 0.1 / 1.75, 1e-12);

  const std::vector<double> even = {1.0, 2.0, 3.0, 4.0};
  const std::vector<double> y = {1.0, 4.0, 9.0, 16.0}, e(4, 1.0);
  const std::vector<Slope> de = gradient_along(even, y, e);
  EXPECT_EQ(de[1].slope, (9.0 - 1.0) / 2.0);
  EXPECT_EQ(de[2].slope, (16.0 - 4.0) / 2.0);
  EXPECT_TRUE(std::isnan(gradient_along({1.0}, {2.0}, {0.1})[0].slope));
}

// Exact identity of sample moments: with paired points (every member has a value at every
// point, as in paired cases), se_i = s_i / sqrt(M) and rho_ij the sample correlation of the
// members' values at i and j (from GSL's gsl_stats_correlation, the reference), the propagated
// error equals the standard deviation across members of each member's own differences over
// sqrt(M). Without rho the points count as independent.
TEST(GradientAlong, PairedErrorIsTheSpreadOfTheMembersOwnDifferences) {
  const std::vector<double> x = {0.0, 0.5, 1.5, 2.0, 3.5};
  const std::size_t points = x.size(), members = 40;
  std::mt19937_64 rng(7);
  std::normal_distribution<double> normal;
  std::vector<std::vector<double>> values(points, std::vector<double>(members));  // [point][member]
  for (std::size_t m = 0; m < members; ++m) {
    const double shared = normal(rng);  // what pairing shares: strongly correlated points
    for (std::size_t i = 0; i < points; ++i) {
      values[i][m] = x[i] * x[i] + shared * (1.0 + 0.2 * i) + 0.3 * normal(rng);
    }
  }
  std::vector<double> mean(points), se(points);
  for (std::size_t i = 0; i < points; ++i) {
    mean[i] = gsl_stats_mean(values[i].data(), 1, members);
    se[i] = gsl_stats_sd(values[i].data(), 1, members) / std::sqrt(static_cast<double>(members));
  }
  const auto rho = [&values, members](std::size_t i, std::size_t j) {
    return gsl_stats_correlation(values[i].data(), 1, values[j].data(), 1, members);
  };
  const std::vector<Slope> paired = gradient_along(x, mean, se, rho);
  // each member's own differences, then their spread
  std::vector<std::vector<double>> own(points, std::vector<double>(members));
  for (std::size_t m = 0; m < members; ++m) {
    std::vector<double> y(points);
    for (std::size_t i = 0; i < points; ++i) y[i] = values[i][m];
    const std::vector<Slope> d = gradient_along(x, y, std::vector<double>(points, 1.0));
    for (std::size_t i = 0; i < points; ++i) own[i][m] = d[i].slope;
  }
  const std::vector<Slope> independent = gradient_along(x, mean, se);
  for (std::size_t i = 0; i < points; ++i) {
    const double expected =
        gsl_stats_sd(own[i].data(), 1, members) / std::sqrt(static_cast<double>(members));
    EXPECT_NEAR(paired[i].stderr_, expected, 1e-12 * expected) << "point " << i;
    EXPECT_NEAR(paired[i].slope, gsl_stats_mean(own[i].data(), 1, members), 1e-12) << "point " << i;
    EXPECT_GT(independent[i].stderr_, 2.0 * paired[i].stderr_) << "point " << i;
  }
  const auto zero = [](std::size_t, std::size_t) { return 0.0; };
  const std::vector<Slope> with_zero = gradient_along(x, mean, se, zero);
  for (std::size_t i = 0; i < points; ++i) EXPECT_EQ(with_zero[i].stderr_, independent[i].stderr_);
  // perfectly correlated equal errors (exact in binary): a difference has no error
  const std::vector<Slope> one =
      gradient_along({0.0, 1.0}, {1.0, 2.0}, {0.25, 0.25}, [](std::size_t, std::size_t) { return 1.0; });
  EXPECT_EQ(one[0].stderr_, 0.0);
}

// Equal member counts: the Pearson correlation of the group means (GSL's
// gsl_stats_correlation, the reference). A group of 2 members weighs as two groups of one with
// the same means (exact). Groups empty in either are skipped; too few groups, or a constant,
// give 0.
TEST(GroupCorrelation, WeightedCorrelationOfTheGroupMeans) {
  const std::vector<double> a = {1.0, 2.5, 0.5, 3.0, 2.0, 4.5}, b = {0.8, 2.0, 1.1, 2.4, 2.9, 3.7};
  const std::vector<double> ones(a.size(), 1.0);
  EXPECT_NEAR(group_correlation(ones, a, ones, b), gsl_stats_correlation(a.data(), 1, b.data(), 1, a.size()),
              1e-14);
  const std::vector<double> twice_a = {1.0, 1.0, 2.5, 0.5, 3.0, 2.0, 4.5};
  const std::vector<double> twice_b = {0.8, 0.8, 2.0, 1.1, 2.4, 2.9, 3.7};
  const std::vector<double> ones7(7, 1.0);
  const std::vector<double> counts = {2.0, 1.0, 1.0, 1.0, 1.0, 1.0};
  EXPECT_NEAR(group_correlation(counts, a, counts, b), group_correlation(ones7, twice_a, ones7, twice_b),
              1e-14);
  std::vector<double> gap = ones;
  gap[1] = 0.0;  // group 1 empty in a: skipped
  const std::vector<double> a5 = {1.0, 0.5, 3.0, 2.0, 4.5}, b5 = {0.8, 1.1, 2.4, 2.9, 3.7};
  EXPECT_NEAR(group_correlation(gap, a, ones, b), gsl_stats_correlation(a5.data(), 1, b5.data(), 1, 5),
              1e-14);
  const std::vector<double> two(2, 1.0);
  EXPECT_EQ(group_correlation(two, {1.0, 2.0}, two, {3.0, 5.0}), 0.0);
  EXPECT_EQ(group_correlation(ones, std::vector<double>(a.size(), 2.0), ones, b), 0.0);
}

// Exact: data on a plane have chi-square 0 (rounding) and p-value 1. A line with +d and -d
// added alternately, equal errors: the weighted fit is then the ordinary one, so the
// chi-square is the sum of the squared residuals of the simple regression (closed-form
// operator above) over se^2. Its p-value is the upper tail of the chi-square distribution,
// exp(-chi2 / 2) for 2 degrees of freedom (exact).
TEST(LinearFitQuality, ChiSquareOfTheWeightedFitAndItsUpperTail) {
  const auto x = grid();
  std::vector<double> y, se;
  for (std::size_t c = 0; c < x.size(); ++c) {
    y.push_back(2.0 + 3.0 * x[c][0] - 0.5 * x[c][1]);
    se.push_back(0.1 + 0.05 * c);
  }
  const FitQuality plane = linear_fit_quality(x, y, se);
  EXPECT_NEAR(plane.chi2, 0.0, 1e-18);
  EXPECT_NEAR(plane.p_value, 1.0, 1e-12);

  const std::vector<std::vector<double>> line = {{0.0}, {1.0}, {2.0}, {3.0}};
  const double d = 0.3, s = 0.2;
  const std::vector<double> yl = {1.0 + d, 2.0 - d, 3.0 + d, 4.0 - d}, sl(4, s);
  const std::vector<double> a = simple_operator({0.0, 1.0, 2.0, 3.0});
  double slope = 0.0;
  for (int c = 0; c < 4; ++c) slope += a[c] * yl[c];
  const double intercept = (yl[0] + yl[1] + yl[2] + yl[3]) / 4.0 - slope * 1.5;
  double chi2 = 0.0;
  for (int c = 0; c < 4; ++c) {
    const double r = (yl[c] - intercept - slope * c) / s;
    chi2 += r * r;
  }
  const FitQuality q = linear_fit_quality(line, yl, sl);
  EXPECT_EQ(q.dof, 2);
  EXPECT_NEAR(q.chi2, chi2, 1e-12 * chi2);
  EXPECT_NEAR(q.p_value, std::exp(-chi2 / 2.0), 1e-12);
}

// Exact, by hand: y = x^2 at x = 0..4 with errors 0.5. The least-squares line is 4 x - 2
// (slope Sxy / Sxx = 40 / 10, through the means (2, 6)), its residuals 2, -1, -2, -1, 2, so
// the chi-square is 14 / 0.25 = 56 on 5 - 2 = 3 degrees of freedom, and the upper tail for 3
// degrees of freedom is erfc(sqrt(chi2 / 2)) + sqrt(2 chi2 / pi) exp(-chi2 / 2).
TEST(LinearFitQuality, AParabolaAgainstItsLineByHand) {
  const std::vector<std::vector<double>> x = {{0.0}, {1.0}, {2.0}, {3.0}, {4.0}};
  const std::vector<double> y = {0.0, 1.0, 4.0, 9.0, 16.0}, se(5, 0.5);
  const FitQuality q = linear_fit_quality(x, y, se);
  EXPECT_EQ(q.dof, 3);
  EXPECT_NEAR(q.chi2, 56.0, 1e-11);
  const double tail = std::erfc(std::sqrt(28.0)) + std::sqrt(112.0 / M_PI) * std::exp(-28.0);
  EXPECT_NEAR(q.p_value, tail, 1e-9 * tail);
}

// Exact: independent fits taken together add their chi-squares and degrees of freedom; the
// p-value of the sum is the chi-square upper tail, exp(-chi2 / 2) (1 + chi2 / 2) for 4 degrees
// of freedom (closed form). Fits without degrees of freedom (too few points) are left out, and
// none at all gives NaN.
TEST(LinearFitQuality, IndependentLinesAddTheirChiSquares) {
  const FitQuality a{1.25, 2, 0.0}, b{3.5, 2, 0.0}, none{std::nan(""), 0, std::nan("")};
  const FitQuality q = combined_fit_quality({a, none, b});
  EXPECT_EQ(q.dof, 4);
  EXPECT_DOUBLE_EQ(q.chi2, 4.75);
  EXPECT_NEAR(q.p_value, std::exp(-4.75 / 2.0) * (1.0 + 4.75 / 2.0), 1e-14);
  const FitQuality empty = combined_fit_quality({none});
  EXPECT_EQ(empty.dof, 0);
  EXPECT_TRUE(std::isnan(empty.chi2) && std::isnan(empty.p_value));
}

}  // namespace
}  // namespace chaosweep::stats
