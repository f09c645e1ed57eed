// Communicator::exchange across real ranks: rank r sends rank d the values (r, d, k) for k
// below (r + 2 d) mod 5 (some ranks nothing); every rank must receive exactly what each rank
// meant for it, in rank order. Communicator::gather_on_root: texts of different lengths (rank
// 0's empty) arrive on rank 0 in rank order, and the other ranks receive none. Also
// plan::owner, the inverse of plan::share that tells where an entry goes, on this rank count.
// Run at 1, 2, 3 and 4 ranks.
#include <cstdio>
#include <string>
#include <vector>

#include "parallel/communicator.hpp"
#include "plan/plan.hpp"

int main(int argc, char** argv) {
  chaosweep::parallel::Session session(&argc, &argv);
  const chaosweep::parallel::Communicator comm;
  const int size = comm.size(), me = comm.rank();
  const auto count = [](int from, int to) { return (from + 2 * to) % 5; };
  std::vector<std::vector<std::int64_t>> to_rank(static_cast<std::size_t>(size));
  for (int d = 0; d < size; ++d) {
    for (int k = 0; k < count(me, d); ++k) {
      to_rank[d].insert(to_rank[d].end(), {me, d, k});
    }
  }
  std::vector<std::int64_t> expected;
  for (int r = 0; r < size; ++r) {
    for (int k = 0; k < count(r, me); ++k) expected.insert(expected.end(), {r, me, k});
  }
  int failures = 0;
  if (comm.exchange(to_rank) != expected) {
    std::printf("rank %d: exchange did not deliver what each rank sent it\n", me);
    ++failures;
  }
  const auto text = [](int rank) {
    return rank == 0 ? std::string() : "rank " + std::to_string(rank) + std::string(rank * 7, '#');
  };
  const std::vector<std::string> gathered = comm.gather_on_root(text(me));
  std::vector<std::string> texts;
  for (int r = 0; me == 0 && r < size; ++r) texts.push_back(text(r));
  if (gathered != texts) {
    std::printf("rank %d: gather_on_root gave %zu texts, not every rank's on rank 0 in order\n",
                me, gathered.size());
    ++failures;
  }
  // every item of n has one owner, whose share holds it
  for (std::int64_t n : {1, 2, 3, 7, 10, 64, 1001}) {
    for (std::int64_t i = 0; i < n; ++i) {
      const chaosweep::plan::Range r =
          chaosweep::plan::share(n, chaosweep::plan::owner(n, i, size), size);
      if (i < r.first || i >= r.last) {
        std::printf("rank %d: item %lld of %lld not in its owner's share\n", me,
                    static_cast<long long>(i), static_cast<long long>(n));
        ++failures;
      }
    }
  }
  failures = static_cast<int>(comm.sum(static_cast<std::int64_t>(failures)));
  if (me == 0 && failures == 0) std::printf("exchange_mpi: ok on %d ranks\n", size);
  return failures == 0 ? 0 : 1;
}
