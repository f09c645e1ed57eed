// The fixed merge tree of the reduction (stats/merge_tree.hpp, parallel/merge_batches.hpp):
// its result is the tree's definition evaluated recursively, bitwise, however the batches are
// split into runs (ranks) and however the runs are grouped when they are combined. The MPI
// test merge_tree_mpi checks the same with real ranks.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <functional>
#include <random>
#include <stdexcept>
#include <vector>

#include "merge_tree_fixtures.hpp"
#include "parallel/communicator.hpp"
#include "parallel/merge_batches.hpp"
#include "stats/ensemble.hpp"
#include "stats/merge_tree.hpp"

namespace chaosweep::testing {
namespace {

const stats::SummaryLayout kLayout{2, 3};

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0;
}

/// The packed node lists of batches [first, last) of a campaign.
std::vector<double> run_of(const stats::MergeTree& tree, std::int64_t first, std::int64_t last) {
  std::vector<double> packed = tree.empty();
  for (std::int64_t b = first; b < last; ++b) {
    tree.add(packed, b, synthetic_summary(kLayout, b).data());
  }
  return packed;
}

/// Every case's summary by the tree's definition, [case][width].
std::vector<double> by_definition(const stats::MergeShape& shape) {
  std::vector<double> out;
  for (std::int64_t c = 0; c < shape.cases; ++c) {
    const std::vector<double> v =
        tree_by_definition(kLayout, c * shape.batches_per_case, shape.batches_per_case);
    out.insert(out.end(), v.begin(), v.end());
  }
  return out;
}

// Exact: batches added one by one give the recursive definition of the tree, bit for bit,
// for every batch count from 1 to 70 (powers of two, one more and one less among them).
TEST(MergeTree, OneRunEqualsTheRecursiveDefinition) {
  for (std::int64_t per_case = 1; per_case <= 70; ++per_case) {
    const stats::MergeShape shape{3, per_case};
    const stats::MergeTree tree(shape, kLayout);
    EXPECT_TRUE(same_bits(tree.finish(run_of(tree, 0, 3 * per_case)), by_definition(shape)))
        << per_case << " batches per case";
  }
}

// Exact: the combination of runs is associative, so any split of the batches into contiguous
// runs (empty ones included, runs crossing cases) and any bracketing of their combination
// gives the same bits as the definition.
TEST(MergeTree, AnySplitAndAnyGroupingGiveTheSameBits) {
  std::mt19937_64 gen(2026);
  for (int trial = 0; trial < 300; ++trial) {
    const stats::MergeShape shape{1 + static_cast<std::int64_t>(gen() % 4),
                                  1 + static_cast<std::int64_t>(gen() % 90)};
    const stats::MergeTree tree(shape, kLayout);
    const std::int64_t total = shape.cases * shape.batches_per_case;
    const int runs = 1 + static_cast<int>(gen() % 20);
    std::vector<std::int64_t> cut = {0, total};
    for (int r = 1; r < runs; ++r) cut.push_back(static_cast<std::int64_t>(gen() % (total + 1)));
    std::sort(cut.begin(), cut.end());
    std::vector<std::vector<double>> packed;
    for (std::size_t r = 0; r + 1 < cut.size(); ++r) packed.push_back(run_of(tree, cut[r], cut[r + 1]));
    // a random bracketing: combine(lo, hi) splits at a random point
    std::function<std::vector<double>(std::size_t, std::size_t)> combine =
        [&](std::size_t lo, std::size_t hi) {
          if (hi - lo == 1) return packed[lo];
          const std::size_t mid = lo + 1 + gen() % (hi - lo - 1);
          const std::vector<double> left = combine(lo, mid);
          std::vector<double> right = combine(mid, hi);
          tree.combine(left.data(), right.data());
          return right;
        };
    ASSERT_TRUE(same_bits(tree.finish(combine(0, packed.size())), by_definition(shape)))
        << "trial " << trial << ": " << shape.cases << " cases x " << shape.batches_per_case
        << " batches in " << packed.size() << " runs";
  }
}

// Published: the pairwise update (Chan, Golub & LeVeque 1983) gives the same moments in any
// order to rounding; the tree's result agrees with a plain left-to-right merge to 1e-12
// relative, and the counts and sums of counts exactly.
TEST(MergeTree, AgreesWithASequentialMergeToRounding) {
  const stats::MergeShape shape{2, 37};
  const stats::MergeTree tree(shape, kLayout);
  const std::vector<double> merged = tree.finish(run_of(tree, 0, 74));
  for (std::int64_t c = 0; c < 2; ++c) {
    std::vector<double> sequential = synthetic_summary(kLayout, c * 37);
    for (std::int64_t b = 1; b < 37; ++b) {
      stats::merge_summary(kLayout, sequential.data(), synthetic_summary(kLayout, c * 37 + b).data());
    }
    for (std::size_t k = 0; k < kLayout.width(); ++k) {
      const double tree_value = merged[c * kLayout.width() + k], plain = sequential[k];
      EXPECT_NEAR(tree_value, plain, 1e-12 * std::abs(plain)) << "case " << c << " value " << k;
    }
    EXPECT_EQ(merged[c * kLayout.width()], sequential[0]);  // the count n of the first moments
  }
}

TEST(MergeTree, RefusesRunsThatAreNotContiguousOrComplete) {
  const stats::MergeShape shape{2, 5};
  const stats::MergeTree tree(shape, kLayout);
  std::vector<double> packed = tree.empty();
  tree.add(packed, 0, synthetic_summary(kLayout, 0).data());
  EXPECT_THROW(tree.add(packed, 2, synthetic_summary(kLayout, 2).data()), std::logic_error);
  EXPECT_THROW(tree.add(packed, 10, synthetic_summary(kLayout, 10).data()), std::logic_error);
  EXPECT_THROW(tree.finish(run_of(tree, 0, 9)), std::logic_error);  // case 1 lacks batch 4
  const std::vector<double> left = run_of(tree, 0, 3);
  std::vector<double> right = run_of(tree, 4, 10);  // batch 3 missing between them
  EXPECT_THROW(tree.combine(left.data(), right.data()), std::logic_error);
}

// The memory the reduction needs does not grow with the batch count: 2 slots per level.
TEST(MergeTree, PackedSizeGrowsWithTheLogarithmOfTheBatches) {
  EXPECT_EQ(stats::MergeTree({1, 1}, kLayout).slots(), 2u);
  EXPECT_EQ(stats::MergeTree({1, 1024}, kLayout).slots(), 22u);
  EXPECT_EQ(stats::MergeTree({1, 1025}, kLayout).slots(), 24u);
  const stats::MergeTree big({11, 100'000'000 / 1024 + 1}, kLayout);  // 1.1e9 members
  EXPECT_EQ(big.packed_size(), 11u * (1 + 36 * (2 + kLayout.width())));
}

// The communicator's serial form runs the same reduction as one rank.
TEST(MergeTree, SerialMergeBatchesEqualsTheDefinition) {
  const stats::MergeShape shape{3, 11};
  std::vector<std::int64_t> indices;
  std::vector<double> summaries;
  for (std::int64_t b = 0; b < 33; ++b) {
    indices.push_back(b);
    const std::vector<double> s = synthetic_summary(kLayout, b);
    summaries.insert(summaries.end(), s.begin(), s.end());
  }
  const std::vector<double> merged = parallel::merge_batches(
      parallel::Communicator::serial(), shape, kLayout, indices, summaries);
  EXPECT_TRUE(same_bits(merged, by_definition(shape)));
  const std::vector<std::int64_t> counts(33 * 2, 3);
  EXPECT_EQ(parallel::sum_batches(parallel::Communicator::serial(), shape, 2, indices, counts),
            std::vector<std::int64_t>(3 * 2, 33));
}

}  // namespace
}  // namespace chaosweep::testing
