// Synthetic batch summaries for the merge-tree tests (serial and MPI): reproducible from the
// batch number alone, so every rank of an MPI test builds the same ones. Moments are
// (n, mean, m2) of a plausible set of values (some batches with no valid member), sums are
// arbitrary, so that floating-point merges round differently in different orders.
#pragma once

#include <cstdint>
#include <random>
#include <vector>

#include "stats/merge_tree.hpp"

namespace chaosweep::testing {

inline std::vector<double> synthetic_summary(const stats::SummaryLayout& layout,
                                             std::int64_t batch) {
  std::mt19937_64 gen(0x9e3779b97f4a7c15ULL ^ static_cast<std::uint64_t>(batch));
  std::uniform_int_distribution<int> count(0, 16);
  std::uniform_real_distribution<double> mean(-30.0, 30.0), spread(0.01, 7.0), sum(-1e3, 1e3);
  std::vector<double> out;
  for (std::size_t k = 0; k < layout.moments; ++k) {
    const int n = count(gen) < 2 ? 0 : count(gen);  // about one batch in nine has none
    out.push_back(n);
    out.push_back(n > 0 ? mean(gen) : 0.0);
    out.push_back(n > 1 ? (n - 1) * spread(gen) : 0.0);
  }
  for (std::size_t k = 0; k < layout.sums; ++k) out.push_back(sum(gen));
  return out;
}

/// The merged summary of batches [first, first + count) by the definition of the tree,
/// evaluated recursively: node (l, j) covers [j 2^l, (j + 1) 2^l) clipped to `count`; a node
/// whose right half is empty is its left half.
inline std::vector<double> tree_by_definition(const stats::SummaryLayout& layout,
                                              std::int64_t first, std::int64_t count) {
  int top = 0;
  while ((std::int64_t{1} << top) < count) ++top;
  struct Eval {
    const stats::SummaryLayout& layout;
    std::int64_t first, count;
    std::vector<double> node(int level, std::int64_t index) const {
      if (level == 0) return synthetic_summary(layout, first + index);
      std::vector<double> left = node(level - 1, 2 * index);
      if (((2 * index + 1) << (level - 1)) >= count) return left;
      const std::vector<double> right = node(level - 1, 2 * index + 1);
      stats::merge_summary(layout, left.data(), right.data());
      return left;
    }
  };
  return Eval{layout, first, count}.node(top, 0);
}

}  // namespace chaosweep::testing
