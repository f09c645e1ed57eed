// Collective writing of an archive-like file at any rank count, then reading it back:
// serially on rank 0, and in parallel with every rank reading its own rows.
// The file layout and value rules are in sample_archive.hpp.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "h5/h5.hpp"
#include "mpi_test_main.hpp"
#include "sample_archive.hpp"
#include "sample_checks.hpp"

namespace chaosweep::test {
namespace {

using h5::Dims;
using h5::ElementType;
namespace s = sample;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string sample_path() { return output_path("collective", ".h5"); }

/// Values of rule(i, j) over an (n0, n1) grid, row-major.
template <class Rule>
auto grid(std::uint64_t n0, std::uint64_t n1, Rule rule) {
  std::vector<decltype(rule(0, 0))> values;
  for (std::uint64_t i = 0; i < n0; ++i)
    for (std::uint64_t j = 0; j < n1; ++j) values.push_back(rule(i, j));
  return values;
}

/// Counts the collective writes this rank joins, to compare with what HDF5 reports.
struct Writer {
  int rank = world_rank();
  int ranks = world_size();
  std::size_t writes = 0;
};

h5::Dataset write_observables(h5::Group& group, Writer& writer) {
  h5::Dataset names = group.create_dataset("observable", ElementType::String, {s::observables()});
  names.make_scale();
  names.set_attribute("long_name", "observable name");
  names.write_strings_from_rank0(writer.rank == 0 ? s::kObservableNames
                                                  : std::vector<std::string>{});
  return names;
}

void write_root_attributes(h5::Group& root, Writer& writer) {
  root.set_attribute("title", s::kTitle);
  root.set_attribute("spec_yaml", s::kSpecYaml);
  root.set_attribute("status", "running");
  root.set_attribute("format_version", std::int64_t{1});
  root.set_attribute("ranks", writer.ranks);  // an int, stored as int64
  root.set_attribute("dt", 0.005);
  root.set_attribute("status", "complete");  // replaces the earlier value
}

void write_case_group(h5::Group& root, Writer& writer) {
  h5::Group group = root.create_group("case");
  h5::Dataset cases = group.create_dimension("case", s::kCases);
  h5::Dataset forcing = group.create_dataset("forcing", ElementType::Float64, {s::kCases});
  forcing.attach_scale(cases, 0);
  forcing.set_attribute("units", "1");
  std::vector<double> values;
  for (std::uint64_t c = 0; c < s::kCases; ++c) values.push_back(s::forcing(c));
  forcing.write_from_rank0(values);
  ++writer.writes;
}

/// time_mean rows of this rank in batches of kBatch members; every rank makes the same
/// number of write calls, passing an empty block once its rows are done.
void write_time_mean(h5::Dataset& dataset, Writer& writer) {
  const s::Rows mine = s::member_rows(writer.rank, writer.ranks);
  std::uint64_t most = 0;
  for (int r = 0; r < writer.ranks; ++r)
    most = std::max(most, s::member_rows(r, writer.ranks).count);
  const std::uint64_t rounds = (most + s::kBatch - 1) / s::kBatch;
  for (std::uint64_t round = 0; round < rounds; ++round) {
    const std::uint64_t done = std::min(mine.count, round * s::kBatch);
    const std::uint64_t count = std::min(s::kBatch, mine.count - done);
    const std::uint64_t first = mine.first + done;
    std::vector<double> block;  // shape (case, count, observable)
    for (std::uint64_t c = 0; c < s::kCases; ++c)
      for (std::uint64_t m = first; m < first + count; ++m)
        for (std::uint64_t o = 0; o < s::observables(); ++o) block.push_back(s::time_mean(c, m, o));
    dataset.write({0, first, 0}, {s::kCases, count, s::observables()}, block);
    ++writer.writes;
  }
}

void write_member_group(h5::Group& root, const h5::Dataset& observable, Writer& writer) {
  h5::Group group = root.create_group("member");
  h5::Dataset cases = group.create_dimension("case", s::kCases);
  h5::Dataset members = group.create_dimension("member", s::kMembers);
  h5::Dataset exponents = group.create_dimension("exponent", 0);

  h5::Dataset mean = group.create_dataset("time_mean", ElementType::Float64,
                                          {s::kCases, s::kMembers, s::observables()}, kNaN);
  mean.attach_scale(cases, 0);
  mean.attach_scale(members, 1);
  mean.attach_scale(observable, 2);
  mean.set_attribute("units", "1");
  mean.set_attribute("long_name", "time mean of each member");
  write_time_mean(mean, writer);

  h5::Dataset changes =
      group.create_dataset("transitions", ElementType::Int64, {s::kCases, s::kMembers});
  changes.attach_scale(cases, 0);
  changes.attach_scale(members, 1);
  const s::Rows mine = s::member_rows(writer.rank, writer.ranks);
  std::vector<std::int64_t> block;
  for (std::uint64_t c = 0; c < s::kCases; ++c)
    for (std::uint64_t m = mine.first; m < mine.first + mine.count; ++m)
      block.push_back(s::transitions(c, m));
  changes.write({0, mine.first}, {s::kCases, mine.count}, block);
  ++writer.writes;

  h5::Dataset status = group.create_dataset("status", ElementType::UInt8, {s::kCases, s::kMembers});
  status.attach_scale(cases, 0);
  status.attach_scale(members, 1);
  status.write_from_rank0(grid(s::kCases, s::kMembers, s::status));
  ++writer.writes;

  h5::Dataset lyapunov =
      group.create_dataset("lyapunov", ElementType::Float64, {s::kCases, s::kMembers, 0});
  lyapunov.attach_scale(cases, 0);
  lyapunov.attach_scale(members, 1);
  lyapunov.attach_scale(exponents, 2);
  lyapunov.write<double>({0, 0, 0}, {s::kCases, s::kMembers, 0}, nullptr);  // no transfer
}

void write_ensemble_group(h5::Group& root, Writer& writer) {
  h5::Group group = root.create_group("ensemble");
  h5::Dataset cases = group.create_dimension("case", s::kCases);
  h5::Dataset bounds = group.create_dimension("bound", s::kBounds);
  h5::Dataset observable =
      group.create_dataset("observable", ElementType::String, {s::observables()});
  observable.make_scale();
  observable.write_strings_from_rank0(s::kObservableNames);

  h5::Dataset mean =
      group.create_dataset("time_mean", ElementType::Float64, {s::kCases, s::observables()}, kNaN);
  mean.attach_scale(cases, 0);
  mean.attach_scale(observable, 1);
  const bool last = writer.rank == writer.ranks - 1;
  const std::uint64_t rows = last ? s::kCases - 1 : 0;
  mean.write({0, 0}, {rows, s::observables()}, grid(rows, s::observables(), s::ensemble_mean));
  ++writer.writes;

  h5::Dataset ci = group.create_dataset("time_mean_ci95", ElementType::Float64,
                                        {s::kCases, s::observables(), s::kBounds});
  ci.attach_scale(cases, 0);
  ci.attach_scale(observable, 1);
  ci.attach_scale(bounds, 2);
  std::vector<double> values;
  for (std::uint64_t c = 0; c < s::kCases; ++c)
    for (std::uint64_t o = 0; o < s::observables(); ++o)
      for (double side : {-0.25, 0.25}) values.push_back(s::ensemble_mean(c, o) + side);
  ci.write_from_rank0(values);
  ++writer.writes;
}

void write_snapshot_group(h5::Group& root, Writer& writer) {
  h5::Group group = root.create_group("snapshot");
  h5::Dataset time = group.create_dataset("time", ElementType::Float64, {s::kTimes});
  time.make_scale();
  time.set_attribute("units", "model time units");
  std::vector<double> times;
  for (std::uint64_t t = 0; t < s::kTimes; ++t) times.push_back(s::snapshot_time(t));
  time.write_from_rank0(times);
  ++writer.writes;

  h5::Dataset cases = group.create_dimension("case", s::kCases);
  h5::Dataset mean = group.create_dataset("mean", ElementType::Float64, {s::kTimes, s::kCases});
  mean.attach_scale(time, 0);
  mean.attach_scale(cases, 1);
  const s::Rows mine = s::time_rows(writer.rank, writer.ranks);
  std::vector<double> block;
  for (std::uint64_t t = mine.first; t < mine.first + mine.count; ++t)
    for (std::uint64_t c = 0; c < s::kCases; ++c) block.push_back(s::snapshot_mean(t, c));
  mean.write({mine.first, 0}, {mine.count, s::kCases}, block);
  ++writer.writes;
}

TEST(H5Collective, WritesSampleArchive) {
  Writer writer;
  h5::File file = h5::File::create_parallel(sample_path(), MPI_COMM_WORLD);
  EXPECT_TRUE(file.is_parallel());
  EXPECT_EQ(file.rank(), writer.rank);
  EXPECT_EQ(file.ranks(), writer.ranks);
  {
    h5::Group root = file.root();
    write_root_attributes(root, writer);
    h5::Dataset observable = write_observables(root, writer);
    write_case_group(root, writer);
    write_member_group(root, observable, writer);
    write_ensemble_group(root, writer);
    write_snapshot_group(root, writer);
  }
  // Every raw-data write was performed collectively by HDF5's MPI-IO driver.
  const h5::TransferCounts transfers = file.transfers();
  EXPECT_EQ(transfers.collective, writer.writes);
  EXPECT_EQ(transfers.independent, 0u);
  file.close();
  EXPECT_FALSE(file.is_open());
}

TEST(H5Collective, Rank0ReadsBackSerially) {
  if (world_rank() == 0) check_sample_serially(sample_path(), world_size());
  MPI_Barrier(MPI_COMM_WORLD);
}

TEST(H5Collective, EveryRankReadsItsRowsInParallel) { check_sample_in_parallel(sample_path()); }

}  // namespace
}  // namespace chaosweep::test
