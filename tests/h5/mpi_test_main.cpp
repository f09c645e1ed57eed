// main() of the MPI GoogleTest executables: every rank runs every test. Rank 0 prints the
// usual report; the other ranks print only their own failures, prefixed with their rank. The
// exit status is non-zero on every rank if any rank failed a test.
#include "mpi_test_main.hpp"

#include <gtest/gtest.h>

#include <cstdio>
#include <filesystem>

namespace chaosweep::test {

namespace {

std::string g_output_directory;

/// Prints "[rank R] file:line: message" for each failed assertion of this rank.
class RankFailurePrinter : public ::testing::EmptyTestEventListener {
 public:
  explicit RankFailurePrinter(int rank) : rank_(rank) {}
  void OnTestPartResult(const ::testing::TestPartResult& result) override {
    if (!result.failed()) return;
    std::printf("[rank %d] %s:%d: %s\n", rank_, result.file_name() ? result.file_name() : "?",
                result.line_number(), result.summary());
    std::fflush(stdout);
  }
  void OnTestEnd(const ::testing::TestInfo& info) override {
    if (info.result()->Failed()) {
      std::printf("[rank %d] FAILED %s.%s\n", rank_, info.test_suite_name(), info.name());
      std::fflush(stdout);
    }
  }

 private:
  int rank_;
};

}  // namespace

const std::string& output_directory() { return g_output_directory; }

int world_rank() {
  int rank = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  return rank;
}

int world_size() {
  int size = 1;
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  return size;
}

std::string output_path(const std::string& stem, const std::string& suffix) {
  return g_output_directory + "/" + stem + ".np" + std::to_string(world_size()) + suffix;
}

}  // namespace chaosweep::test

int main(int argc, char** argv) {
  MPI_Init(&argc, &argv);
  ::testing::InitGoogleTest(&argc, argv);
  const int rank = chaosweep::test::world_rank();
  if (argc != 2) {
    if (rank == 0) std::fprintf(stderr, "usage: %s OUTPUT_DIRECTORY\n", argv[0]);
    MPI_Finalize();
    return 2;
  }
  chaosweep::test::g_output_directory = argv[1];
  if (rank == 0) std::filesystem::create_directories(argv[1]);
  MPI_Barrier(MPI_COMM_WORLD);

  auto& listeners = ::testing::UnitTest::GetInstance()->listeners();
  if (rank != 0) {
    delete listeners.Release(listeners.default_result_printer());
    listeners.Append(new chaosweep::test::RankFailurePrinter(rank));
  }
  const int local_failed = RUN_ALL_TESTS() != 0 ? 1 : 0;
  int any_failed = 0;
  MPI_Allreduce(&local_failed, &any_failed, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
  if (rank == 0 && any_failed && !local_failed) {
    std::printf("FAILED on another rank (see its [rank R] lines above)\n");
  }
  MPI_Finalize();
  return any_failed ? 1 : 0;
}
