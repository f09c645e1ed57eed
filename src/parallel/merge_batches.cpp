// Per-batch summaries merged per case across ranks (see merge_batches.hpp).
#include "parallel/merge_batches.hpp"

#include <stdexcept>
#include <string>

namespace chaosweep::parallel {

MergedCases merge_cases(const Communicator& comm, const LocalPartial& mine) {
  if (mine.waiting() > 0) {
    throw std::logic_error("merge_cases: " + std::to_string(mine.waiting()) +
                           " batches wait for an earlier one that never came");
  }
  const stats::MergeTree& tree = mine.tree();
  const std::vector<double> all = comm.combine_in_rank_order(
      mine.packed(), [&tree](const double* left, double* right) { tree.combine(left, right); });
  return MergedCases{mine.parts(), tree.finish(all), comm.sum(mine.counts())};
}

std::vector<double> merge_batches(const Communicator& comm, const stats::MergeShape& shape,
                                  const stats::SummaryLayout& layout,
                                  const std::vector<std::int64_t>& indices,
                                  const std::vector<double>& summaries) {
  const std::size_t width = layout.width();
  if (summaries.size() != indices.size() * width) {
    throw std::logic_error("merge_batches: summaries do not match the batches");
  }
  const stats::MergeTree tree(shape, layout);
  std::vector<double> packed = tree.empty();
  for (std::size_t i = 0; i < indices.size(); ++i) {
    tree.add(packed, indices[i], summaries.data() + i * width);
  }
  const std::vector<double> all = comm.combine_in_rank_order(
      packed, [&tree](const double* left, double* right) { tree.combine(left, right); });
  return tree.finish(all);
}

std::vector<std::int64_t> sum_batches(const Communicator& comm, const stats::MergeShape& shape,
                                      std::size_t width, const std::vector<std::int64_t>& indices,
                                      const std::vector<std::int64_t>& counts) {
  if (counts.size() != indices.size() * width) {
    throw std::logic_error("sum_batches: counts do not match the batches");
  }
  std::vector<std::int64_t> sums(static_cast<std::size_t>(shape.cases) * width, 0);
  for (std::size_t i = 0; i < indices.size(); ++i) {
    if (indices[i] < 0 || indices[i] >= shape.cases * shape.batches_per_case) {
      throw std::logic_error("sum_batches: batch " + std::to_string(indices[i]) + " out of range");
    }
    const std::size_t c = static_cast<std::size_t>(indices[i] / shape.batches_per_case);
    for (std::size_t k = 0; k < width; ++k) sums[c * width + k] += counts[i * width + k];
  }
  return comm.sum(sums);
}

}  // namespace chaosweep::parallel
