// Checkpoint format and store: round trips are exact, damage is detected, a checkpoint of
// another spec is refused, an incomplete generation is ignored.
#include <gtest/gtest.h>

#include <unistd.h>

#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <limits>

#include "checkpoint/files.hpp"
#include "checkpoint/record.hpp"
#include "checkpoint/store.hpp"

namespace chaosweep::checkpoint {
namespace {

namespace fs = std::filesystem;

run::BatchResult sample_result(std::int64_t batch) {
  run::BatchResult r;
  r.batch_index = batch;
  r.case_index = 2;
  r.first_member = 16;
  r.count = 3;
  r.initial_state = {1.0, -0.0, 1e-300, 2.5, std::numeric_limits<double>::denorm_min(), 7,
                     8, 9, 10};
  r.status = {0, 1, 0};
  r.time_mean = {0.1, std::numeric_limits<double>::quiet_NaN(), 0.3};
  r.time_variance = {1, 2, 3};
  r.regime_fraction = {0.25, 0.75, 0.5, 0.5, 1, 0};
  r.regime_mean_residence = {1, 2, 3, 4, 5, std::numeric_limits<double>::infinity()};
  r.regime_transitions = {5, 0, 7};
  r.histogram = {1, 2, 3, 4};
  r.trajectory = {0.5, 0.25};
  r.trajectory_members = 1;
  return r;
}

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

class StoreTest : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() /
           ("chaosweep-ckpt-" + std::to_string(::getpid()) + "-" +
            ::testing::UnitTest::GetInstance()->current_test_info()->name());
    fs::remove_all(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }
  fs::path dir_;
};

TEST_F(StoreTest, FinishedBatchRoundTripIsBitwise) {
  const Store store(dir_.string(), "abc");
  store.initialise("campaign: {name: x}\n");
  const run::BatchResult in = sample_result(7);
  store.save_done(in);
  std::string problem;
  const auto out = store.load_done(7, &problem);
  ASSERT_TRUE(out.has_value()) << problem;
  EXPECT_EQ(out->batch_index, 7);
  EXPECT_EQ(out->case_index, 2);
  EXPECT_EQ(out->first_member, 16);
  EXPECT_EQ(out->count, 3);
  EXPECT_EQ(out->trajectory_members, 1);
  EXPECT_TRUE(same_bits(out->initial_state, in.initial_state));
  EXPECT_TRUE(same_bits(out->time_mean, in.time_mean));  // NaN payload kept
  EXPECT_TRUE(same_bits(out->regime_mean_residence, in.regime_mean_residence));
  EXPECT_EQ(out->status, in.status);
  EXPECT_EQ(out->regime_transitions, in.regime_transitions);
  EXPECT_EQ(out->histogram, in.histogram);
  EXPECT_EQ(store.stored_spec(), "campaign: {name: x}\n");
  EXPECT_FALSE(store.load_done(8, &problem).has_value());  // absent: no problem reported
}

TEST_F(StoreTest, FlippedByteIsDetectedByTheChecksum) {
  const Store store(dir_.string(), "abc");
  store.initialise("spec");
  store.save_done(sample_result(3));
  const fs::path file = dir_ / "done" / "batch-0000000003.ckpt";
  std::string bytes = read_file(file.string());
  bytes[bytes.size() / 2] ^= 0x01;
  std::ofstream(file, std::ios::binary) << bytes;
  std::string problem;
  EXPECT_FALSE(store.load_done(3, &problem).has_value());
  EXPECT_NE(problem.find("checksum"), std::string::npos) << problem;
}

TEST_F(StoreTest, TruncatedFileIsDetected) {
  const Store store(dir_.string(), "abc");
  store.initialise("spec");
  store.save_done(sample_result(3));
  const fs::path file = dir_ / "done" / "batch-0000000003.ckpt";
  fs::resize_file(file, fs::file_size(file) / 2);
  std::string problem;
  EXPECT_FALSE(store.load_done(3, &problem).has_value());
  EXPECT_FALSE(problem.empty());
}

TEST_F(StoreTest, CheckpointOfAnotherSpecIsRefused) {
  Store(dir_.string(), "spec-one").initialise("one");
  Store(dir_.string(), "spec-one").save_done(sample_result(1));
  std::string problem;
  EXPECT_FALSE(Store(dir_.string(), "spec-two").load_done(1, &problem).has_value());
  EXPECT_NE(problem.find("different spec"), std::string::npos) << problem;
}

run::BatchState sample_state(std::int64_t batch, double value) {
  run::BatchState s;
  s.batch_index = batch;
  s.step = 1234;
  s.reals = {{"x", {value, -value, 0.125}}, {"moments", {}}};
  s.integers = {{"counts", {1, -2, 3}}};
  return s;
}

TEST_F(StoreTest, GenerationsKeepTheNewestAndIgnoreIncompleteOnes) {
  const Store store(dir_.string(), "abc");
  store.initialise("spec");
  for (std::int64_t g = 1; g <= 3; ++g) {
    store.begin_generation(g);
    store.save_state(g, sample_state(5, static_cast<double>(g)));
    store.commit_generation(g, {5}, 2);
  }
  store.begin_generation(4);  // written but never committed: a crash during the write
  store.save_state(4, sample_state(5, 4.0));
  EXPECT_EQ(store.generations(), (std::vector<std::int64_t>{3, 2}));  // keep = 2; 4 incomplete
  std::string problem;
  const auto state = store.load_state(3, 5, &problem);
  ASSERT_TRUE(state.has_value()) << problem;
  EXPECT_EQ(state->step, 1234);
  EXPECT_EQ(state->reals[0].first, "x");
  EXPECT_EQ(state->reals[0].second, (std::vector<double>{3.0, -3.0, 0.125}));
  EXPECT_EQ(state->integers[0].second, (std::vector<std::int64_t>{1, -2, 3}));
  EXPECT_FALSE(store.load_state(3, 6, &problem).has_value());  // not in the manifest
  store.remove_leftovers();
  EXPECT_FALSE(fs::exists(dir_ / "gen-00000004.partial"));
  store.remove_all();
  EXPECT_FALSE(fs::exists(dir_));
}

TEST_F(StoreTest, MissingManifestMakesAGenerationUnusable) {
  const Store store(dir_.string(), "abc");
  store.initialise("spec");
  store.begin_generation(1);
  store.save_state(1, sample_state(2, 1.0));
  store.commit_generation(1, {2}, 2);
  fs::remove(dir_ / "gen-00000001" / "MANIFEST");
  std::string problem;
  EXPECT_FALSE(store.load_state(1, 2, &problem).has_value());
  EXPECT_FALSE(problem.empty());
}

// A run that fails before it saved anything leaves no directory; one that saved a finished
// batch or a generation keeps all of it, and so does a directory holding files of the user's.
TEST_F(StoreTest, OnlyADirectoryWithNothingSavedIsRemovedAfterAFailure) {
  const Store store(dir_.string(), "abc");
  store.initialise("spec");
  store.begin_generation(1);  // a generation being written when the failure came
  EXPECT_TRUE(store.remove_if_nothing_saved());
  EXPECT_FALSE(fs::exists(dir_));

  store.initialise("spec");
  store.save_done(sample_result(4));
  EXPECT_FALSE(store.remove_if_nothing_saved());
  EXPECT_TRUE(fs::exists(dir_ / "done" / "batch-0000000004.ckpt"));
  store.remove_all();

  store.initialise("spec");
  store.begin_generation(1);
  store.save_state(1, sample_state(2, 1.0));
  store.commit_generation(1, {2}, 2);
  EXPECT_FALSE(store.remove_if_nothing_saved());
  EXPECT_TRUE(fs::exists(dir_ / "gen-00000001" / "MANIFEST"));
  store.remove_all();

  store.initialise("spec");
  std::ofstream(dir_ / "notes.txt") << "the user's own file";
  EXPECT_TRUE(store.remove_if_nothing_saved());
  EXPECT_TRUE(fs::exists(dir_ / "notes.txt"));
  EXPECT_FALSE(fs::exists(dir_ / "campaign.yaml"));
}

TEST(Record, EncodeDecodeAndGarbage) {
  Record r;
  r.header = {{"kind", "state"}, {"batch", "4"}};
  r.reals = {{"a", {1.5}}};
  r.bytes = {{"b", {1, 2, 255}}};
  const Record back = decode(encode(r), "mem");
  EXPECT_EQ(back.field("batch"), "4");
  EXPECT_EQ(back.real("a"), std::vector<double>{1.5});
  EXPECT_EQ(back.byte_array("b"), (std::vector<std::uint8_t>{1, 2, 255}));
  EXPECT_THROW(decode("not a checkpoint at all, just some text bytes here", "mem"),
               CorruptCheckpoint);
  EXPECT_THROW(decode("", "mem"), CorruptCheckpoint);
}

}  // namespace
}  // namespace chaosweep::checkpoint
