// The response sums (stats/lagged_sums.hpp) against their definition summed lag by lag, and
// a batch resumed from its saved sums against the uninterrupted one.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "stats/lagged_sums.hpp"

namespace chaosweep::testing {
namespace {

constexpr int kDim = 3, kObs = 4, kWidth = 8, kLags = 5, kSamples = 60;

/// A deterministic, irregular state for column j at sample k, [dim].
double state(int j, int k, int i) { return std::sin(0.37 * k + 1.3 * i + 0.71 * j) + 0.1 * i; }
/// Observables: the state variables, then x0 * x1.
double observable(int j, int k, int o) {
  return o < kDim ? state(j, k, o) : state(j, k, 0) * state(j, k, 1);
}

/// Feeds samples [from, to) of every column to `sums`.
void feed(stats::LaggedSums& sums, int from, int to) {
  std::vector<double> x(kDim * kWidth), a(kObs * kWidth);
  for (int k = from; k < to; ++k) {
    for (int j = 0; j < kWidth; ++j) {
      for (int i = 0; i < kDim; ++i) x[i * kWidth + j] = state(j, k, i);
      for (int o = 0; o < kObs; ++o) a[o * kWidth + j] = observable(j, k, o);
    }
    std::vector<const double*> rows;
    for (int o = 0; o < kObs; ++o) rows.push_back(a.data() + o * kWidth);
    sums.add(k, x.data(), rows);
  }
}

// Columns 0-4 in group 0 (a run longer than the column block), 5-6 in group 1, 7 padding.
const std::vector<int> kGroups = {0, 0, 0, 0, 0, 1, 1, -1};
const stats::LagSumsLayout kLayout{kObs, kDim};

TEST(LaggedSums, EqualTheirDefinitionLagByLag) {
  stats::LaggedSums sums(kLayout, kLags, kWidth, kGroups, 2);
  feed(sums, 0, kSamples);
  const double w[kLags + 1] = {0.5, 1, 1, 1, 1, 0.5};  // trapezoid weights
  const std::vector<double> blocks = sums.blocks();
  for (int g = 0; g < 2; ++g) {
    const double* block = blocks.data() + g * kLayout.width();
    std::vector<double> want(kLayout.width(), 0.0);
    for (int j = 0; j < kWidth; ++j) {
      if (kGroups[j] != g) continue;
      for (int k = 0; k < kSamples; ++k) {
        for (int o = 0; o < kObs; ++o) want[kLayout.sum_a() + o] += observable(j, k, o);
        std::size_t at = kLayout.sum_xx();
        for (int i = 0; i < kDim; ++i) {
          want[kLayout.sum_x() + i] += state(j, k, i);
          for (int m = i; m < kDim; ++m) want[at++] += state(j, k, i) * state(j, k, m);
        }
        if (k < kLags) continue;
        for (int l = 0; l <= kLags; ++l) {
          for (int o = 0; o < kObs; ++o) {
            for (int i = 0; i < kDim; ++i) {
              want[kLayout.lagged() + o * kDim + i] += w[l] * observable(j, k, o) * state(j, k - l, i);
            }
          }
        }
      }
    }
    for (std::size_t s = 1; s < kLayout.width(); ++s) {  // the member count is the caller's
      EXPECT_NEAR(block[s], want[s], 1e-12 * (1.0 + std::abs(want[s]))) << "group " << g << " sum " << s;
    }
  }
}

TEST(LaggedSums, ResumedFromASavedStateAreBitwiseTheUninterruptedOnes) {
  stats::LaggedSums whole(kLayout, kLags, kWidth, kGroups, 2);
  feed(whole, 0, kSamples);
  stats::LaggedSums first(kLayout, kLags, kWidth, kGroups, 2);
  feed(first, 0, 23);
  stats::SavedState saved;
  first.save("response.", saved);
  stats::LaggedSums resumed(kLayout, kLags, kWidth, kGroups, 2);
  stats::SavedStateReader in(saved.reals, saved.integers);
  resumed.load("response.", in);
  in.finish();
  feed(resumed, 23, kSamples);
  const std::vector<double> got = resumed.blocks(), want = whole.blocks();
  ASSERT_EQ(got.size(), want.size());
  for (std::size_t s = 0; s < want.size(); ++s) EXPECT_EQ(got[s], want[s]) << "sum " << s;
}

// The lag integral of an exponentially decaying covariance, from sums built to hold it exactly:
// one state variable with C(tau) = exp(-tau) (so C(0) = 1, <x> = 0); the predicted response to a
// forcing along it is the trapezoid sum every * sum_l w_l exp(-l every), close to the exact 1.
TEST(LaggedSums, PredictionIsTheTrapezoidLagIntegralTimesTheInverseCovariance) {
  const stats::LagSumsLayout layout{1, 1};
  const int lags = 40, groups = 1;
  const std::int64_t samples = 1000;
  const double every = 0.1, n = 3.0;
  std::vector<double> block(layout.width(), 0.0);
  block[layout.members()] = n;
  block[layout.sum_xx()] = n * samples * 2.0;  // C(0) = 2
  double trapezoid = 0.0;
  for (int l = 0; l <= lags; ++l) {
    trapezoid += (l == 0 || l == lags ? 0.5 : 1.0) * 2.0 * std::exp(-l * every);
  }
  block[layout.lagged()] = n * (samples - lags) * trapezoid;
  const stats::PredictedResponse p =
      stats::predict_response(layout, block.data(), groups, lags, samples, every, {{1.0}, {3.0}});
  EXPECT_NEAR(p.slope[0], every * trapezoid / 2.0, 1e-14);
  EXPECT_NEAR(p.slope[0], 1.0 - std::exp(-4.0), 1e-3);  // the integral of exp(-tau) to 4
  EXPECT_NEAR(p.slope[1], 3.0 * p.slope[0], 1e-14);
  EXPECT_TRUE(std::isnan(p.stderr_[0]));  // one group: no jackknife
}

}  // namespace
}  // namespace chaosweep::testing
