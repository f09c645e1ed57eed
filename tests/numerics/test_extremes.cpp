// Per-member extremes: the accumulator (stats/extremes.hpp) against the standard library's
// std::min_element and std::max_element.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdint>
#include <limits>
#include <random>
#include <vector>

#include "core/error.hpp"
#include "numerics_fixtures.hpp"
#include "stats/extremes.hpp"

namespace chaosweep::testing {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// `count` values drawn from a few levels, so that equal values (ties) are frequent; -0.0 and
/// +0.0 are among them.
std::vector<double> tied_series(std::mt19937_64& gen, int count) {
  static const double levels[] = {-2.5, -1.0, -0.0, 0.0, 0.75, 3.0, 1e300, -1e-300};
  std::uniform_int_distribution<int> pick(0, 7);
  std::vector<double> v(static_cast<std::size_t>(count));
  for (double& x : v) x = levels[pick(gen)];
  return v;
}

/// member-major series [width][count] into the columns of an accumulator of `series` = 1.
stats::Extremes accumulate(const std::vector<std::vector<double>>& members) {
  const int width = static_cast<int>(members.size());
  stats::Extremes e(1, width);
  std::vector<double> column(static_cast<std::size_t>(width));
  const double* columns[] = {column.data()};
  for (std::size_t k = 0; k < members[0].size(); ++k) {
    for (int m = 0; m < width; ++m) column[m] = members[m][k];
    e.add(columns);
  }
  return e;
}

// Outside check: std::min_element and std::max_element (C++17 [alg.min.max]) return the first
// smallest and the first largest element under operator<; -0.0 < +0.0 is false there as here,
// so among zeros of either sign the first one is kept. Values compared bit for bit.
TEST(Extremes, EqualMinElementAndMaxElementOnSeriesWithTies) {
  std::mt19937_64 gen(11);
  for (int count : {1, 2, 7, 64, 301}) {
    std::vector<std::vector<double>> members;
    for (int m = 0; m < 5; ++m) members.push_back(tied_series(gen, count));
    const stats::Extremes e = accumulate(members);
    EXPECT_EQ(e.count(), count);
    for (int m = 0; m < 5; ++m) {
      const std::vector<double>& v = members[m];
      const auto lo = std::min_element(v.begin(), v.end());
      const auto hi = std::max_element(v.begin(), v.end());
      EXPECT_TRUE(same_bits(e.min(0, m), *lo)) << count << " member " << m;
      EXPECT_TRUE(same_bits(e.max(0, m), *hi)) << count << " member " << m;
      EXPECT_EQ(e.min_at(0, m), lo - v.begin()) << count << " member " << m;
      EXPECT_EQ(e.max_at(0, m), hi - v.begin()) << count << " member " << m;
    }
  }
}

// Outside check: std::min_element / std::max_element again, on continuous random values with
// several series side by side (series s of member m at column m of row s).
TEST(Extremes, SeveralSeriesAreIndependent) {
  std::mt19937_64 gen(12);
  std::normal_distribution<double> normal(3.0, 10.0);
  const int series = 3, width = 4, count = 500;
  std::vector<double> values(static_cast<std::size_t>(count) * series * width);
  for (double& x : values) x = normal(gen);
  stats::Extremes e(series, width);
  for (int k = 0; k < count; ++k) {
    const double* row = values.data() + static_cast<std::size_t>(k) * series * width;
    const double* columns[] = {row, row + width, row + 2 * width};
    e.add(columns);
  }
  for (int s = 0; s < series; ++s) {
    for (int m = 0; m < width; ++m) {
      std::vector<double> v;
      for (int k = 0; k < count; ++k) v.push_back(values[(k * series + s) * width + m]);
      const auto lo = std::min_element(v.begin(), v.end());
      const auto hi = std::max_element(v.begin(), v.end());
      EXPECT_TRUE(same_bits(e.min(s, m), *lo));
      EXPECT_TRUE(same_bits(e.max(s, m), *hi));
      EXPECT_EQ(e.min_at(s, m), lo - v.begin());
      EXPECT_EQ(e.max_at(s, m), hi - v.begin());
    }
  }
}

/// Runs of random lengths (1 .. 32, as a kernel's segments) folded by add_run, or by fold()
/// and merge_run() as a fused kernel does, into a scalar member's extremes.
struct RunExtremes {
  double lo = stats::Extremes::kInfinity, hi = -stats::Extremes::kInfinity;
  std::int64_t lo_at = -1, hi_at = -1;
};

// Outside check: std::min_element / std::max_element over the whole series, whichever way it
// is cut into runs; add_run and fold() + merge_run() must also agree with each other.
TEST(Extremes, RunsEqualMinElementAndMaxElementForAnyCut) {
  std::mt19937_64 gen(13);
  std::uniform_int_distribution<int> length(1, 32);
  for (int trial = 0; trial < 200; ++trial) {
    const std::vector<double> v = tied_series(gen, 1 + trial * 3);
    RunExtremes a, b;
    std::int64_t first = 0;
    while (first < static_cast<std::int64_t>(v.size())) {
      const int steps =
          static_cast<int>(std::min<std::int64_t>(length(gen), v.size() - first));
      auto sample = [&](int t) { return v[first + t]; };
      stats::Extremes::add_run(sample, steps, first, a.lo, a.lo_at, a.hi, a.hi_at);
      double run_lo = stats::Extremes::kInfinity, run_hi = -stats::Extremes::kInfinity;
      for (int t = 0; t < steps; ++t) stats::Extremes::fold(sample(t), run_lo, run_hi);
      stats::Extremes::merge_run(sample, steps, first, run_lo, run_hi, b.lo, b.lo_at, b.hi,
                                 b.hi_at);
      first += steps;
    }
    const auto lo = std::min_element(v.begin(), v.end());
    const auto hi = std::max_element(v.begin(), v.end());
    for (const RunExtremes& r : {a, b}) {
      EXPECT_TRUE(same_bits(r.lo, *lo)) << "trial " << trial;
      EXPECT_TRUE(same_bits(r.hi, *hi)) << "trial " << trial;
      EXPECT_EQ(r.lo_at, lo - v.begin()) << "trial " << trial;
      EXPECT_EQ(r.hi_at, hi - v.begin()) << "trial " << trial;
    }
  }
}

using Vec4 = double __attribute__((vector_size(4 * sizeof(double))));
using Int4 = std::int64_t __attribute__((vector_size(4 * sizeof(std::int64_t))));

// Exact by design (extremes.hpp): on a GCC vector of members the per-sample rule and the runs
// give, element by element, what the scalar rule gives each member; std::min_element and
// std::max_element are the outside reference for the scalar rule.
TEST(Extremes, VectorsOfMembersEqualEachMemberAlone) {
  std::mt19937_64 gen(14);
  std::uniform_int_distribution<int> length(1, 32);
  const int count = 400;
  std::vector<std::vector<double>> members;
  for (int k = 0; k < 4; ++k) members.push_back(tied_series(gen, count));
  auto lanes = [&](std::int64_t k) {
    return Vec4{members[0][k], members[1][k], members[2][k], members[3][k]};
  };
  Vec4 lo = Vec4{} + stats::Extremes::kInfinity, hi = Vec4{} - stats::Extremes::kInfinity;
  Int4 lo_at = Int4{} - 1, hi_at = Int4{} - 1;
  Vec4 run_lo = lo, run_hi = hi;
  Int4 run_lo_at = lo_at, run_hi_at = hi_at;
  for (std::int64_t k = 0; k < count; ++k) {
    stats::Extremes::add_sample(lanes(k), Int4{} + k, lo, lo_at, hi, hi_at);
  }
  for (std::int64_t first = 0; first < count;) {
    const int steps = static_cast<int>(std::min<std::int64_t>(length(gen), count - first));
    stats::Extremes::add_run([&](int t) { return lanes(first + t); }, steps, first, run_lo,
                             run_lo_at, run_hi, run_hi_at);
    first += steps;
  }
  for (int m = 0; m < 4; ++m) {
    const std::vector<double>& v = members[m];
    const auto vlo = std::min_element(v.begin(), v.end());
    const auto vhi = std::max_element(v.begin(), v.end());
    EXPECT_TRUE(same_bits(lo[m], *vlo) && same_bits(run_lo[m], *vlo)) << "member " << m;
    EXPECT_TRUE(same_bits(hi[m], *vhi) && same_bits(run_hi[m], *vhi)) << "member " << m;
    EXPECT_EQ(lo_at[m], vlo - v.begin());
    EXPECT_EQ(run_lo_at[m], vlo - v.begin());
    EXPECT_EQ(hi_at[m], vhi - v.begin());
    EXPECT_EQ(run_hi_at[m], vhi - v.begin());
  }
}

// Exact by design (extremes.hpp): a NaN never replaces an extreme, so a member with NaN
// samples keeps the extremes of its other samples, and one with only NaN keeps index -1.
TEST(Extremes, NaNSamplesAreNeverTaken) {
  const std::vector<std::vector<double>> members = {{kNaN, 2.0, kNaN, -1.0, kNaN},
                                                    {kNaN, kNaN, kNaN, kNaN, kNaN}};
  const stats::Extremes e = accumulate(members);
  EXPECT_EQ(e.min(0, 0), -1.0);
  EXPECT_EQ(e.min_at(0, 0), 3);
  EXPECT_EQ(e.max(0, 0), 2.0);
  EXPECT_EQ(e.max_at(0, 0), 1);
  EXPECT_EQ(e.min_at(0, 1), -1);
  EXPECT_EQ(e.max_at(0, 1), -1);
}

// Exact by design: a state saved after part of a series and loaded into a fresh accumulator
// continues to the same extremes and indices; states of another shape or with an index
// outside the samples taken are refused.
TEST(Extremes, SaveAndLoadContinueBitwise) {
  std::mt19937_64 gen(15);
  std::vector<std::vector<double>> members;
  for (int m = 0; m < 3; ++m) members.push_back(tied_series(gen, 90));
  const stats::Extremes whole = accumulate(members);
  stats::Extremes part(1, 3);
  std::vector<double> column(3);
  const double* columns[] = {column.data()};
  auto add = [&](stats::Extremes& e, int k) {
    for (int m = 0; m < 3; ++m) column[m] = members[m][k];
    e.add(columns);
  };
  for (int k = 0; k < 40; ++k) add(part, k);
  stats::SavedState saved;
  part.save("x.", saved);
  stats::Extremes resumed(1, 3);
  stats::SavedStateReader in(saved.reals, saved.integers);
  resumed.load("x.", in);
  in.finish();
  for (int k = 40; k < 90; ++k) add(resumed, k);
  for (int m = 0; m < 3; ++m) {
    EXPECT_TRUE(same_bits(resumed.min(0, m), whole.min(0, m)));
    EXPECT_TRUE(same_bits(resumed.max(0, m), whole.max(0, m)));
    EXPECT_EQ(resumed.min_at(0, m), whole.min_at(0, m));
    EXPECT_EQ(resumed.max_at(0, m), whole.max_at(0, m));
  }
  stats::Extremes wider(1, 4);
  stats::SavedStateReader wrong_shape(saved.reals, saved.integers);
  EXPECT_THROW(wider.load("x.", wrong_shape), Error);
  stats::SavedState late = saved;
  for (auto& a : late.integers) {
    if (a.first == "x.min_at") a.second[0] = 40;  // sample 40 has not been taken yet
  }
  stats::SavedStateReader late_in(late.reals, late.integers);
  EXPECT_THROW(stats::Extremes(1, 3).load("x.", late_in), Error);
}

}  // namespace
}  // namespace chaosweep::testing
