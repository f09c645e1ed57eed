// The standard error of a time mean under autocorrelation (stats/blocking.hpp): blocking levels,
// the plateau rule, tau_int and n_eff on AR(1) series, an oscillating AR(2) series,
// checkpointing, the ensemble rule.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <tuple>
#include <vector>

#include "stats/blocking.hpp"
#include "stats/time_moments.hpp"

namespace chaosweep::stats {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Exact variance of the mean of n consecutive values of a stationary AR(1) series
/// x_t = phi x_{t-1} + e_t, Var(e) = 1. Derivation: gamma(t) = phi^|t| / (1 - phi^2), so
///   Var(mean) = (gamma(0) / n) [1 + 2 sum_{t=1}^{n-1} (1 - t/n) phi^t]
/// and with sum_{t=1}^{n-1} phi^t = (phi - phi^n) / (1 - phi) and
/// sum_{t=1}^{n-1} t phi^t = phi (1 - n phi^{n-1} + (n-1) phi^n) / (1 - phi)^2 the bracket is
///   (1 + phi) / (1 - phi) - 2 phi (1 - phi^n) / (n (1 - phi)^2).
double ar1_variance_of_mean(double phi, double n) {
  const double gamma0 = 1.0 / (1.0 - phi * phi);
  const double bracket =
      (1.0 + phi) / (1.0 - phi) - 2.0 * phi * (1.0 - std::pow(phi, n)) / (n * (1.0 - phi) * (1.0 - phi));
  return gamma0 / n * bracket;
}

/// tau_int of AR(1): 1/2 + sum_{t>=1} phi^t = (1 + phi) / (2 (1 - phi)) (Sokal 1997).
double ar1_tau(double phi) { return (1.0 + phi) / (2.0 * (1.0 - phi)); }

/// A stationary AR(1) series from a fixed-seed std::mt19937_64: x_0 ~ N(0, 1 / (1 - phi^2)).
class Ar1 {
 public:
  Ar1(double phi, std::uint64_t seed) : phi_(phi), gen_(seed) {
    x_ = normal_(gen_) / std::sqrt(1.0 - phi * phi);
    first_ = true;
  }
  double next() {
    if (!first_) x_ = phi_ * x_ + normal_(gen_);
    first_ = false;
    return x_;
  }

 private:
  double phi_;
  std::mt19937_64 gen_;
  std::normal_distribution<double> normal_{0.0, 1.0};
  double x_ = 0.0;
  bool first_ = true;
};

struct Ar1Result {
  BlockingEstimate e;
  double naive_se;  // sqrt(s^2 / n), the iid standard error
};

/// Blocking over n samples of AR(1) fed one sample at a time (base length 1).
Ar1Result blocked_ar1(double phi, std::int64_t n, std::uint64_t seed) {
  Ar1 series(phi, seed);
  BlockedMeans blocks(1, 1);
  Moments m;
  for (std::int64_t t = 0; t < n; ++t) {
    const double x = series.next();
    m.add(x);
    blocks.add(&x);
  }
  return {blocking_estimate(blocks.levels(0), static_cast<double>(n), m.variance()),
          std::sqrt(m.variance() / static_cast<double>(n))};
}

// ---- the reference itself -------------------------------------------------------------------

// Exact: the closed form above against the direct double sum of the covariances
// Var(mean) = (1/n^2) sum_{s,t} gamma(s - t); rounding only, hence 1e-12 relative.
TEST(BlockingReference, Ar1VarianceOfTheMeanClosedForm) {
  for (double phi : {0.5, 0.9, 0.99}) {
    for (int n : {1, 2, 7, 60}) {
      double sum = 0.0;
      for (int s = 0; s < n; ++s) {
        for (int t = 0; t < n; ++t) sum += std::pow(phi, std::abs(s - t)) / (1.0 - phi * phi);
      }
      const double direct = sum / (static_cast<double>(n) * n);
      EXPECT_NEAR(ar1_variance_of_mean(phi, n), direct, 1e-12 * direct) << phi << " " << n;
    }
  }
}

// ---- AR(1): tau_int and the standard error --------------------------------------------------

// Published: tau_int = (1 + phi) / (2 (1 - phi)) for AR(1) (Sokal 1997, NATO ASI B 361, 131;
// Madras & Sokal 1988), checked within 5% (the tolerance); the blocking standard error
// reaches the true standard deviation of the mean (Flyvbjerg & Petersen 1989, J. Chem. Phys. 91,
// 461), checked within 10% of the exact value derived above.
// Lengths: the chosen level has blocks of 32 to 64 tau_int, so its variance falls short by
// 1.5-3% (header of blocking.hpp; for phi 0.99, blocks of 4096 = 41 tau_int, 2.4%) and its
// statistical error is sqrt(2 / blocks). The tau_int check is the tight one: phi 0.5 at 2^22
// samples (0.4% noise), phi 0.9 at 2^24 (0.8%), phi 0.99 at 2^27 (0.8%). While choosing these
// lengths, other seeds gave worst tau_int errors of 2.9% (phi 0.5, 2^22, 20 seeds), 2.2%
// (phi 0.9, 2^24, 8 seeds) and 4.4% (phi 0.99 at 2^26, 10 seeds; 2^27 halves the noise), and
// at most 2.3% in the standard error. The iid standard error is off by a factor sqrt(2 tau_int)
// (1.7 to 14), so a naive estimator fails the 10% check; the test asserts that too.
void expect_ar1(double phi, std::int64_t n, std::uint64_t seed) {
  const Ar1Result r = blocked_ar1(phi, n, seed);
  const double exact_se = std::sqrt(ar1_variance_of_mean(phi, static_cast<double>(n)));
  EXPECT_TRUE(r.e.plateau) << "phi " << phi;
  EXPECT_NEAR(r.e.tau_int, ar1_tau(phi), 0.05 * ar1_tau(phi)) << "phi " << phi;
  EXPECT_NEAR(r.e.stderr_, exact_se, 0.10 * exact_se) << "phi " << phi;
  EXPECT_NEAR(r.e.n_eff, static_cast<double>(n) / (2.0 * r.e.tau_int), 1e-9 * r.e.n_eff);
  EXPECT_GT(std::abs(r.naive_se - exact_se), 0.10 * exact_se)
      << "the iid standard error should fail this check";
}

TEST(BlockingAr1, Phi05) { expect_ar1(0.5, std::int64_t{1} << 22, 11); }
TEST(BlockingAr1, Phi09) { expect_ar1(0.9, std::int64_t{1} << 24, 12); }
TEST(BlockingAr1, Phi099) { expect_ar1(0.99, std::int64_t{1} << 27, 13); }

// An oscillating correlation function: AR(2) x_t = a1 x_{t-1} + a2 x_{t-2} + e_t with complex
// roots r exp(+-i 2 pi / P), a1 = 2 r cos(2 pi / P), a2 = -r^2, here r 0.99 and a period of
// P = 50 steps. Exact: the autocovariances of an AR(p) series sum to Var(e) / (1 - a1 - ... -
// ap)^2 (its spectral density at frequency zero), so n Var(mean) tends to 1 / (1 - a1 - a2)^2
// (the O(1/n) correction is below 1e-4 here). The blocked estimate approaches this plateau
// from above (2.1 times it at blocks of 16 steps, 1.2 at 128), and a block length of 32 tau_k
// alone would stop at 128 steps, 20% high; the agreement with the next level (blocking.hpp,
// condition 2) carries on to the plateau. Tolerance 10%, as for AR(1) (2^22 samples; other
// seeds gave at most 4.6%).
TEST(BlockingAr2, OscillatingCorrelationsReachThePlateau) {
  constexpr double r = 0.99, period = 50.0;
  constexpr std::int64_t n = std::int64_t{1} << 22;
  const double a1 = 2.0 * r * std::cos(2.0 * M_PI / period), a2 = -r * r;
  const double exact_se = std::sqrt(1.0 / ((1.0 - a1 - a2) * (1.0 - a1 - a2)) / n);
  std::mt19937_64 gen(31);
  std::normal_distribution<double> normal(0.0, 1.0);
  double x1 = 0.0, x2 = 0.0;
  auto next = [&] {
    const double x = a1 * x1 + a2 * x2 + normal(gen);
    x2 = x1;
    x1 = x;
    return x;
  };
  for (int t = 0; t < 10000; ++t) next();  // 100 damping times (1 / (1 - r) steps each)
  BlockedMeans blocks(1, 1);
  Moments m;
  for (std::int64_t t = 0; t < n; ++t) {
    const double x = next();
    m.add(x);
    blocks.add(&x);
  }
  const std::vector<BlockLevel> levels = blocks.levels(0);
  const BlockingEstimate e = blocking_estimate(levels, static_cast<double>(n), m.variance());
  EXPECT_TRUE(e.plateau);
  EXPECT_NEAR(e.stderr_, exact_se, 0.10 * exact_se);
  // condition (1) alone: the first level with b >= 32 tau_k is still far above the plateau
  for (const BlockLevel& level : levels) {
    const double var_mean = level.block_means.variance() * level.block_length / n;
    if (level.block_length >= kBlocksPerTau * var_mean * n / (2.0 * m.variance())) {
      EXPECT_GT(std::sqrt(var_mean), 1.10 * exact_se) << "block length " << level.block_length;
      break;
    }
  }
}

// Exact: independent samples have tau_int = 1/2 (no correlation at any lag), n_eff = n; the
// rule's first qualifying block length is 32 * 1/2 = 16 samples (level 4, or 5 when the
// estimate at level 4 comes out above 1/2); 2^20 samples leave a statistical error near 2% at
// those levels, hence 5%.
TEST(BlockingAr1, WhiteNoiseHasTauOneHalf) {
  const Ar1Result r = blocked_ar1(0.0, std::int64_t{1} << 20, 14);
  EXPECT_TRUE(r.e.plateau);
  EXPECT_GE(r.e.level, 4);
  EXPECT_LE(r.e.level, 5);
  EXPECT_NEAR(r.e.tau_int, 0.5, 0.025);
  EXPECT_NEAR(r.e.stderr_, r.naive_se, 0.05 * r.naive_se);
}

// The time-moments accumulator feeds the levels with its 256-sample block means: the same
// estimate from base blocks (Flyvbjerg & Petersen: any level above the base reaches the same
// plateau), same tolerances and lengths as above; phi 0.9 (tau_int 9.5, shorter than one base
// block) and 0.99 (tau_int 99.5) with other seeds.
TEST(BlockingAr1, TimeMomentsBaseBlocks) {
  for (const auto& [phi, n, seed] :
       {std::tuple<double, std::int64_t, std::uint64_t>{0.9, std::int64_t{1} << 24, 15},
        std::tuple<double, std::int64_t, std::uint64_t>{0.99, std::int64_t{1} << 27, 16}}) {
    Ar1 series(phi, seed);
    TimeMoments moments(1, 1);
    for (std::int64_t t = 0; t < n; ++t) {
      const double x = series.next();
      const double* column = &x;
      moments.add(&column);
    }
    const BlockingEstimate e = moments.standard_error(0, 0);
    const double exact_se = std::sqrt(ar1_variance_of_mean(phi, static_cast<double>(n)));
    EXPECT_TRUE(e.plateau) << phi;
    EXPECT_NEAR(e.tau_int, ar1_tau(phi), 0.05 * ar1_tau(phi)) << phi;
    EXPECT_NEAR(e.stderr_, exact_se, 0.10 * exact_se) << phi;
  }
}

// ---- the rule on its own --------------------------------------------------------------------

// Exact by construction: hand-made levels. Level 0 has too few blocks: NaN. A level that meets
// b >= 32 tau_k is chosen even when a later one is larger; without one, the largest estimate
// among the levels with 16 blocks is taken and `plateau` is false.
TEST(BlockingRule, ChoosesTheFirstLongBlockLevel) {
  const double n = 4096.0, var = 1.0;
  // level k: block length b, 4096 / b blocks, variance of block means v
  auto level = [&](double b, double v) {
    const double blocks = n / b;
    return BlockLevel{b, Moments{blocks, 0.0, v * (blocks - 1.0)}};
  };
  EXPECT_TRUE(std::isnan(blocking_estimate({level(512, 0.1)}, n, var).stderr_));  // 8 blocks
  // tau_k = b v / 2: level 64 has tau 3.2 (64 < 32 * 3.2), level 128 has tau 3.84 (128 >= 123)
  const BlockingEstimate e =
      blocking_estimate({level(64, 0.1), level(128, 0.06), level(256, 0.05)}, n, var);
  EXPECT_TRUE(e.plateau);
  EXPECT_EQ(e.level, 1);
  EXPECT_DOUBLE_EQ(e.stderr_, std::sqrt(0.06 * 128 / n));
  EXPECT_DOUBLE_EQ(e.tau_int, 0.06 * 128 / 2.0);
  EXPECT_DOUBLE_EQ(e.n_eff, var / (0.06 * 128 / n));
  // no plateau: tau_k = b v / 2 stays near b / 2
  const BlockingEstimate f =
      blocking_estimate({level(64, 0.9), level(128, 0.95), level(256, 0.7)}, n, var);
  EXPECT_FALSE(f.plateau);
  EXPECT_EQ(f.level, 2);  // 0.7 * 256 is the largest variance of the mean
  EXPECT_DOUBLE_EQ(f.stderr_, std::sqrt(0.7 * 256 / n));
}

// Exact: a constant series has zero standard error.
TEST(BlockingRule, ConstantSeries) {
  BlockedMeans blocks(1, 1);
  const double x = 3.0;
  for (int t = 0; t < 64; ++t) blocks.add(&x);
  const BlockingEstimate e = blocking_estimate(blocks.levels(0), 64.0, 0.0);
  EXPECT_EQ(e.stderr_, 0.0);
  EXPECT_EQ(e.n_eff, 64.0);
}

// ---- determinism and checkpoints ------------------------------------------------------------

// Exact by design: cells are independent columns (a cell's levels equal those of a one-cell
// run on the same data, bitwise), and a state saved at any point and loaded into a fresh
// instance continues bitwise as the uninterrupted one.
TEST(BlockedMeans, CellsIndependentAndSaveLoadBitwise) {
  constexpr int kCells = 3, kBlocks = 1000;
  std::mt19937_64 gen(21);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> data(static_cast<std::size_t>(kCells) * kBlocks);
  for (double& v : data) v = normal(gen);
  auto column = [&](int t) { return data.data() + static_cast<std::size_t>(t) * kCells; };

  BlockedMeans whole(kCells, 8);
  for (int t = 0; t < kBlocks; ++t) whole.add(column(t));
  for (int split : {1, 2, 3, 255, 256, 513, 999}) {
    BlockedMeans first(kCells, 8);
    for (int t = 0; t < split; ++t) first.add(column(t));
    SavedState saved;
    first.save("b.", saved);
    BlockedMeans second(kCells, 8);
    SavedStateReader in(saved.reals, saved.integers);
    second.load("b.", in);
    in.finish();
    for (int t = split; t < kBlocks; ++t) second.add(column(t));
    for (int c = 0; c < kCells; ++c) {
      const std::vector<BlockLevel> a = whole.levels(c), b = second.levels(c);
      ASSERT_EQ(a.size(), b.size());
      for (std::size_t k = 0; k < a.size(); ++k) {
        EXPECT_EQ(a[k].block_means.n, b[k].block_means.n);
        EXPECT_EQ(a[k].block_means.mean, b[k].block_means.mean) << split << " " << c << " " << k;
        EXPECT_EQ(a[k].block_means.m2, b[k].block_means.m2);
      }
    }
  }
  for (int c = 0; c < kCells; ++c) {
    BlockedMeans single(1, 8);
    for (int t = 0; t < kBlocks; ++t) single.add(column(t) + c);
    const std::vector<BlockLevel> a = whole.levels(c), b = single.levels(0);
    ASSERT_EQ(a.size(), b.size());
    // 1000 blocks: levels 0..9 (level 9 holds one block of 512)
    EXPECT_EQ(a.size(), 10u);
    for (std::size_t k = 0; k < a.size(); ++k) {
      EXPECT_EQ(a[k].block_length, 8.0 * std::ldexp(1.0, static_cast<int>(k)));
      EXPECT_EQ(a[k].block_means.mean, b[k].block_means.mean);
      EXPECT_EQ(a[k].block_means.m2, b[k].block_means.m2);
    }
  }
}

// Exact by design: the time-moments accumulator stopped at any step (inside a block or at its
// end), saved and loaded into a fresh one, gives bitwise the uninterrupted standard errors
// (20 000 steps: 78 blocks of 256, levels up to 4096 steps in use).
TEST(BlockedMeans, TimeMomentsSaveLoadBitwise) {
  constexpr int kSeries = 2, kWidth = 3, kSteps = 20000;
  std::mt19937_64 gen(22);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> data(static_cast<std::size_t>(kSteps) * kSeries * kWidth);
  double x = 0.0;
  for (double& v : data) v = x = 0.95 * x + normal(gen);  // correlated, one long stream
  auto feed = [&](TimeMoments& m, int from, int to) {
    for (int t = from; t < to; ++t) {
      const double* base = data.data() + static_cast<std::size_t>(t) * kSeries * kWidth;
      const double* columns[kSeries] = {base, base + kWidth};
      m.add(columns);
    }
  };
  TimeMoments whole(kSeries, kWidth);
  feed(whole, 0, kSteps);
  for (int split : {1, 255, 256, 4097, 12345, 19999}) {
    TimeMoments first(kSeries, kWidth);
    feed(first, 0, split);
    SavedState saved;
    first.save("m.", saved);
    TimeMoments second(kSeries, kWidth);
    SavedStateReader in(saved.reals, saved.integers);
    second.load("m.", in);
    in.finish();
    feed(second, split, kSteps);
    for (int s = 0; s < kSeries; ++s) {
      for (int m = 0; m < kWidth; ++m) {
        const BlockingEstimate a = whole.standard_error(s, m), b = second.standard_error(s, m);
        ASSERT_TRUE(std::isfinite(a.stderr_));
        EXPECT_EQ(a.stderr_, b.stderr_) << split;
        EXPECT_EQ(a.tau_int, b.tau_int) << split;
        EXPECT_EQ(a.level, b.level);
      }
    }
  }
}

// A state of another shape is refused with a one-line error.
TEST(BlockedMeans, LoadRefusesAnotherShape) {
  BlockedMeans a(2, 4);
  const double v[2] = {1.0, 2.0};
  for (int t = 0; t < 5; ++t) a.add(v);
  SavedState saved;
  a.save("b.", saved);
  BlockedMeans b(3, 4);
  SavedStateReader in(saved.reals, saved.integers);
  EXPECT_THROW(b.load("b.", in), std::exception);
}

// ---- from members to the ensemble -----------------------------------------------------------

// Exact arithmetic on hand-picked values: the larger of std / sqrt(n) and
// sqrt(sum stderr^2) / n; one member (no spread) uses the pooled member error alone.
TEST(EnsembleMeanStderr, LargerOfSpreadAndPooledMemberErrors) {
  // 4 members, spread 2: 2 / 2 = 1; pooled sqrt(4 * 0.25) / 4 = 0.25
  EXPECT_EQ(ensemble_mean_stderr(2.0, 4.0, 1.0), 1.0);
  // pooled larger: sqrt(4 * 9) / 4 = 1.5
  EXPECT_EQ(ensemble_mean_stderr(2.0, 4.0, 36.0), 1.5);
  EXPECT_EQ(ensemble_mean_stderr(kNaN, 1.0, 0.25), 0.5);
  EXPECT_EQ(ensemble_mean_stderr(2.0, 4.0, kNaN), 1.0);
  EXPECT_TRUE(std::isnan(ensemble_mean_stderr(kNaN, 0.0, kNaN)));
}

}  // namespace
}  // namespace chaosweep::stats
