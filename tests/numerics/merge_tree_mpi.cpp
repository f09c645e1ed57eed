// The merge tree across real ranks (parallel/merge_batches.hpp): every rank takes an uneven,
// contiguous share of the batches (some ranks none, shares crossing cases), and the merged
// summaries must equal the tree's recursive definition bit for bit, and the summed counts
// the exact totals, on every rank. Run at 1, 2, 3, 4 and 16 ranks.
#include <cstdio>
#include <cstring>
#include <vector>

#include "merge_tree_fixtures.hpp"
#include "parallel/communicator.hpp"
#include "parallel/merge_batches.hpp"

namespace {

using chaosweep::stats::MergeShape;
using chaosweep::stats::SummaryLayout;

/// Rank r's share [first, last) of `total` batches: cut at total * r^2 / size^2, so that low
/// ranks get few batches (none when total is small) and high ranks many.
void share(std::int64_t total, int rank, int size, std::int64_t& first, std::int64_t& last) {
  const auto cut = [&](std::int64_t r) { return total * r * r / (std::int64_t{size} * size); };
  first = cut(rank);
  last = cut(rank + 1);
}

/// Failures found on this rank for one shape.
int check(const chaosweep::parallel::Communicator& comm, const MergeShape& shape,
          const SummaryLayout& layout) {
  const std::int64_t total = shape.cases * shape.batches_per_case;
  std::int64_t first = 0, last = 0;
  share(total, comm.rank(), comm.size(), first, last);
  std::vector<std::int64_t> indices, counts;
  std::vector<double> summaries;
  for (std::int64_t b = first; b < last; ++b) {
    indices.push_back(b);
    const std::vector<double> s = chaosweep::testing::synthetic_summary(layout, b);
    summaries.insert(summaries.end(), s.begin(), s.end());
    counts.push_back(b);
    counts.push_back(1);
  }
  const std::vector<double> merged =
      chaosweep::parallel::merge_batches(comm, shape, layout, indices, summaries);
  const std::vector<std::int64_t> sums =
      chaosweep::parallel::sum_batches(comm, shape, 2, indices, counts);
  int failures = 0;
  for (std::int64_t c = 0; c < shape.cases; ++c) {
    const std::int64_t b0 = c * shape.batches_per_case, n = shape.batches_per_case;
    const std::vector<double> expected = chaosweep::testing::tree_by_definition(layout, b0, n);
    if (std::memcmp(expected.data(), merged.data() + c * layout.width(),
                    layout.width() * sizeof(double)) != 0) {
      std::printf("rank %d: %lld cases x %lld batches: case %lld differs from the tree's definition\n",
                  comm.rank(), static_cast<long long>(shape.cases),
                  static_cast<long long>(n), static_cast<long long>(c));
      ++failures;
    }
    // exact: the sum of b over the case's batches, and their number
    if (sums[2 * c] != n * b0 + n * (n - 1) / 2 || sums[2 * c + 1] != n) {
      std::printf("rank %d: case %lld: counts %lld %lld, not the exact sums\n", comm.rank(),
                  static_cast<long long>(c), static_cast<long long>(sums[2 * c]),
                  static_cast<long long>(sums[2 * c + 1]));
      ++failures;
    }
  }
  return failures;
}

}  // namespace

int main(int argc, char** argv) {
  chaosweep::parallel::Session session(&argc, &argv);
  const chaosweep::parallel::Communicator comm;
  const SummaryLayout layout{3, 2};
  const MergeShape shapes[] = {{1, 1}, {3, 1}, {1, 7}, {2, 16}, {3, 25}, {1, 64}, {2, 100}, {5, 33}};
  int failures = 0;
  for (const MergeShape& shape : shapes) failures += check(comm, shape, layout);
  if (comm.rank() == 0 && failures == 0) {
    std::printf("merge_tree_mpi: %zu campaign shapes bitwise equal to the tree on %d ranks\n",
                sizeof(shapes) / sizeof(shapes[0]), comm.size());
  }
  return failures == 0 ? 0 : 1;
}
