// Read-back checks of the sample file: every value against the rules of sample_archive.hpp.
#include "sample_checks.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "h5/h5.hpp"
#include "mpi_test_main.hpp"
#include "sample_archive.hpp"

namespace chaosweep::test {
namespace {

using h5::Dims;
namespace s = sample;

/// Element-wise equality with NaN equal to NaN; reports the first difference only.
template <class T>
void expect_values(const std::vector<T>& actual, const std::vector<T>& expected,
                   const std::string& label) {
  ASSERT_EQ(actual.size(), expected.size()) << label;
  for (std::size_t i = 0; i < actual.size(); ++i) {
    bool same = actual[i] == expected[i];
    if constexpr (std::is_floating_point_v<T>) {
      same = same || (std::isnan(actual[i]) && std::isnan(expected[i]));
    }
    ASSERT_TRUE(same) << label << " element " << i << ": " << +actual[i] << " != " << +expected[i];
  }
}

void check_root(const h5::Group& root, int writer_ranks) {
  EXPECT_EQ(root.string_attribute("title"), s::kTitle);
  EXPECT_EQ(root.string_attribute("spec_yaml"), s::kSpecYaml);
  EXPECT_EQ(root.string_attribute("status"), "complete");
  EXPECT_EQ(root.int64_attribute("format_version"), 1);
  EXPECT_EQ(root.int64_attribute("ranks"), writer_ranks);
  EXPECT_EQ(root.double_attribute("dt"), 0.005);
  EXPECT_EQ(root.attribute_names(), (std::vector<std::string>{"dt", "format_version", "ranks",
                                                              "spec_yaml", "status", "title"}));
  EXPECT_EQ(root.members(),
            (std::vector<std::string>{"case", "ensemble", "member", "observable", "snapshot"}));
  EXPECT_TRUE(root.has_group("member"));
  EXPECT_TRUE(root.has_dataset("member/time_mean"));
  EXPECT_FALSE(root.has_dataset("member"));
  EXPECT_FALSE(root.exists("member/nothing"));
  EXPECT_FALSE(root.exists("nothing/time_mean"));

  const h5::Dataset names = root.open_dataset("observable");
  EXPECT_EQ(names.element_type(), h5::ElementType::String);
  EXPECT_TRUE(names.is_scale());
  EXPECT_FALSE(names.is_dimension_without_coordinates());
  EXPECT_EQ(names.string_attribute("NAME"), "observable");  // set by make_scale()
  EXPECT_EQ(names.read<std::string>().values, s::kObservableNames);
  EXPECT_EQ(names.read<std::string>({1}, {2}).values,
            (std::vector<std::string>{s::kObservableNames[1], s::kObservableNames[2]}));
}

void check_case_group(const h5::Group& root) {
  const h5::Dataset forcing = root.open_dataset("case/forcing");
  const h5::Array<double> values = forcing.read<double>();
  EXPECT_EQ(values.shape, Dims{s::kCases});
  for (std::uint64_t c = 0; c < s::kCases; ++c) EXPECT_EQ(values.values[c], s::forcing(c));
  EXPECT_EQ(forcing.string_attribute("units"), "1");
  const h5::Dataset cases = root.open_dataset("case/case");
  EXPECT_TRUE(cases.is_dimension_without_coordinates());
  EXPECT_EQ(cases.string_attribute("NAME"),
            "This is a netCDF dimension but not a netCDF variable.         3");
}

void check_member_group(const h5::Group& root) {
  const h5::Group group = root.open_group("member");
  EXPECT_EQ(group.members(), (std::vector<std::string>{"case", "exponent", "lyapunov", "member",
                                                       "status", "time_mean", "transitions"}));
  const h5::Array<double> mean = group.open_dataset("time_mean").read<double>();
  EXPECT_EQ(mean.shape, (Dims{s::kCases, s::kMembers, s::observables()}));
  std::vector<double> expected;
  for (std::uint64_t c = 0; c < s::kCases; ++c)
    for (std::uint64_t m = 0; m < s::kMembers; ++m)
      for (std::uint64_t o = 0; o < s::observables(); ++o)
        expected.push_back(s::time_mean(c, m, o));
  expect_values(mean.values, expected, "member/time_mean");

  std::vector<std::int64_t> changes;
  std::vector<std::uint8_t> status;
  for (std::uint64_t c = 0; c < s::kCases; ++c)
    for (std::uint64_t m = 0; m < s::kMembers; ++m) {
      changes.push_back(s::transitions(c, m));
      status.push_back(s::status(c, m));
    }
  expect_values(group.open_dataset("transitions").read<std::int64_t>().values, changes,
                "transitions");
  expect_values(group.open_dataset("status").read<std::uint8_t>().values, status, "status");
  EXPECT_EQ(group.open_dataset("lyapunov").shape(), (Dims{s::kCases, s::kMembers, 0}));
  EXPECT_TRUE(group.open_dataset("lyapunov").read<double>().values.empty());
  EXPECT_TRUE(group.open_dataset("member").is_dimension_without_coordinates());
  EXPECT_EQ(group.open_dataset("member").shape(), Dims{s::kMembers});
}

void check_ensemble_group(const h5::Group& root) {
  const h5::Group group = root.open_group("ensemble");
  std::vector<double> mean, ci;
  for (std::uint64_t c = 0; c < s::kCases; ++c)
    for (std::uint64_t o = 0; o < s::observables(); ++o) {
      const double value = c + 1 < s::kCases ? s::ensemble_mean(c, o) : NAN;  // last: fill
      mean.push_back(value);
      ci.push_back(s::ensemble_mean(c, o) - 0.25);
      ci.push_back(s::ensemble_mean(c, o) + 0.25);
    }
  expect_values(group.open_dataset("time_mean").read<double>().values, mean, "ensemble mean");
  expect_values(group.open_dataset("time_mean_ci95").read<double>().values, ci, "ci95");
  EXPECT_EQ(group.open_dataset("observable").read<std::string>().values, s::kObservableNames);
  // One row out of the middle, as a hyperslab.
  const h5::Array<double> row =
      group.open_dataset("time_mean").read<double>({1, 0}, {1, s::observables()});
  EXPECT_EQ(row.shape, (Dims{1, s::observables()}));
  EXPECT_EQ(row.values[2], s::ensemble_mean(1, 2));
}

void check_snapshot_group(const h5::Group& root) {
  const h5::Group group = root.open_group("snapshot");
  const h5::Array<double> time = group.open_dataset("time").read<double>();
  for (std::uint64_t t = 0; t < s::kTimes; ++t) EXPECT_EQ(time.values[t], s::snapshot_time(t));
  std::vector<double> mean;
  for (std::uint64_t t = 0; t < s::kTimes; ++t)
    for (std::uint64_t c = 0; c < s::kCases; ++c) mean.push_back(s::snapshot_mean(t, c));
  expect_values(group.open_dataset("mean").read<double>().values, mean, "snapshot mean");
  EXPECT_TRUE(group.open_dataset("time").is_scale());
  EXPECT_FALSE(group.open_dataset("time").is_dimension_without_coordinates());
}

}  // namespace

void check_sample_serially(const std::string& path, int writer_ranks) {
  h5::File file = h5::File::open_read(path);
  EXPECT_FALSE(file.is_parallel());
  {
    const h5::Group root = file.root();
    check_root(root, writer_ranks);
    check_case_group(root);
    check_member_group(root);
    check_ensemble_group(root);
    check_snapshot_group(root);
  }
  file.close();
}

void check_sample_in_parallel(const std::string& path) {
  const int rank = world_rank();
  h5::File file = h5::File::open_read_parallel(path, MPI_COMM_WORLD);
  EXPECT_TRUE(file.is_parallel());
  {
    const h5::Group member = file.group("member");
    const s::Rows mine = s::member_rows(rank, world_size());
    const h5::Array<double> mean =
        member.open_dataset("time_mean")
            .read<double>({0, mine.first, 0}, {s::kCases, mine.count, s::observables()});
    std::vector<double> expected;
    for (std::uint64_t c = 0; c < s::kCases; ++c)
      for (std::uint64_t m = mine.first; m < mine.first + mine.count; ++m)
        for (std::uint64_t o = 0; o < s::observables(); ++o)
          expected.push_back(s::time_mean(c, m, o));
    expect_values(mean.values, expected, "own rows of member/time_mean");
    EXPECT_EQ(file.root().open_dataset("observable").read<std::string>().values,
              s::kObservableNames);
    EXPECT_EQ(file.root().string_attribute("title"), s::kTitle);
  }
  file.close();
}

}  // namespace chaosweep::test
