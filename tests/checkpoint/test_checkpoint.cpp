// Checkpoint format and store: round trips are exact, damage is detected and costs only its
// batch (a payload, a header, a record cut short), a checkpoint of another spec or of the older
// format is refused, an incomplete generation is ignored.
#include <gtest/gtest.h>

#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <limits>
#include <optional>
#include <random>

#include "checkpoint/files.hpp"
#include "checkpoint/record.hpp"
#include "checkpoint/segment.hpp"
#include "checkpoint/store.hpp"
#include "core/sha256.hpp"

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

/// The segment file a store of `rank` appends to.
fs::path segment(const fs::path& dir, int rank) {
  char name[32];
  std::snprintf(name, sizeof name, "segment-%05d.ckpt", rank);
  return dir / "done" / name;
}

/// Offsets of the records in a segment, read independently of the store: each record is a
/// 224-byte header whose u64 at byte 24 is the payload's length (segment.hpp).
std::vector<std::uint64_t> record_offsets(const fs::path& file) {
  const std::string bytes = read_file(file.string());
  std::vector<std::uint64_t> offsets;
  for (std::uint64_t at = 0; at + kSegmentHeaderSize <= bytes.size();) {
    offsets.push_back(at);
    std::uint64_t length = 0;
    std::memcpy(&length, bytes.data() + at + 24, sizeof length);
    at += kSegmentHeaderSize + length;
  }
  return offsets;
}

/// Flips one bit of the file at `offset`.
void flip_bit(const fs::path& file, std::uint64_t offset) {
  std::fstream f(file, std::ios::in | std::ios::out | std::ios::binary);
  f.seekg(static_cast<std::streamoff>(offset));
  char c = 0;
  f.get(c);
  f.seekp(static_cast<std::streamoff>(offset));
  f.put(static_cast<char>(c ^ 0x01));
}

std::optional<run::BatchResult> load(const Store& store, std::int64_t batch,
                                     std::string* problem) {
  return store.load_done(store.index_done(0, 1000), batch, problem);
}

TEST_F(StoreTest, FinishedBatchRoundTripIsBitwise) {
  const Store store(dir_.string(), "abc", 0);
  store.initialise("campaign: {name: x}\n");
  const run::BatchResult in = sample_result(7);
  store.save_done(in);
  store.flush_done();  // records are gathered, then written together
  std::string problem;
  const auto out = load(store, 7, &problem);
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
  EXPECT_FALSE(load(store, 8, &problem).has_value());  // absent: no problem reported
  EXPECT_TRUE(problem.empty()) << problem;
}

// Finished batches go to one segment per rank, never one file per batch; an index covers the
// batches asked for, whichever rank wrote them.
TEST_F(StoreTest, FinishedBatchesOfEveryRankShareOneSegmentEach) {
  const Store rank0(dir_.string(), "abc", 0), rank3(dir_.string(), "abc", 3);
  rank0.initialise("spec");
  for (std::int64_t b : {0, 1, 2}) rank0.save_done(sample_result(b));
  for (std::int64_t b : {5, 4}) rank3.save_done(sample_result(b));
  rank0.sync_done();
  rank3.sync_done();
  std::vector<std::string> names;
  for (const auto& entry : fs::directory_iterator(dir_ / "done")) {
    names.push_back(entry.path().filename().string());
  }
  std::sort(names.begin(), names.end());
  EXPECT_EQ(names, (std::vector<std::string>{"segment-00000.ckpt", "segment-00003.ckpt"}));
  EXPECT_EQ(record_offsets(segment(dir_, 3)).size(), 2u);
  EXPECT_EQ(rank0.write_stats().files, 2);  // campaign.yaml and its segment
  EXPECT_EQ(rank3.write_stats().files, 1);

  const Store reader(dir_.string(), "abc", 7);  // a resume on another rank count
  const DoneIndex index = reader.index_done(1, 5);
  EXPECT_EQ(index.batches.size(), 3u);  // batches 1, 2 and 4
  EXPECT_TRUE(index.problems.empty());
  for (std::int64_t b : {1, 2, 4}) {
    std::string problem;
    const auto r = reader.load_done(index, b, &problem);
    ASSERT_TRUE(r.has_value()) << problem;
    EXPECT_EQ(r->batch_index, b);
  }
  EXPECT_FALSE(reader.load_done(index, 5, nullptr).has_value());  // outside the range
}

// One flipped bit in a record's payload costs that batch only.
TEST_F(StoreTest, FlippedBitInAPayloadCostsOnlyItsBatch) {
  const Store store(dir_.string(), "abc", 0);
  store.initialise("spec");
  for (std::int64_t b : {3, 4, 5}) store.save_done(sample_result(b));
  store.flush_done();
  const std::vector<std::uint64_t> at = record_offsets(segment(dir_, 0));
  ASSERT_EQ(at.size(), 3u);
  flip_bit(segment(dir_, 0), (at[1] + kSegmentHeaderSize + at[2]) / 2);  // inside batch 4's payload
  std::string problem;
  EXPECT_FALSE(load(store, 4, &problem).has_value());
  EXPECT_NE(problem.find("checksum"), std::string::npos) << problem;
  EXPECT_TRUE(load(store, 3, nullptr).has_value());
  EXPECT_TRUE(load(store, 5, nullptr).has_value());
}

// A damaged header is skipped to the next record: the records after it are found.
TEST_F(StoreTest, DamagedHeaderResynchronisesAtTheNextRecord) {
  const Store store(dir_.string(), "abc", 0);
  store.initialise("spec");
  for (std::int64_t b : {0, 1, 2, 3}) store.save_done(sample_result(b));
  store.flush_done();
  const std::vector<std::uint64_t> at = record_offsets(segment(dir_, 0));
  flip_bit(segment(dir_, 0), at[1] + 20);  // batch 1's index field
  const DoneIndex index = store.index_done(0, 10);
  ASSERT_EQ(index.problems.size(), 1u);
  EXPECT_NE(index.problems[0].find("record header at byte " + std::to_string(at[1])),
            std::string::npos)
      << index.problems[0];
  EXPECT_EQ(index.batches.count(1), 0u);
  for (std::int64_t b : {0, 2, 3}) EXPECT_TRUE(store.load_done(index, b, nullptr).has_value());

  flip_bit(segment(dir_, 0), at[2]);  // batch 2's magic as well: two records skipped at once
  const DoneIndex again = store.index_done(0, 10);
  EXPECT_EQ(again.problems.size(), 1u);
  EXPECT_EQ(again.batches.count(2), 0u);
  EXPECT_TRUE(store.load_done(again, 3, nullptr).has_value());
}

// A record cut short at the end (the writer killed during the append) is ignored, and the
// next append first cuts the segment back to its last sound record.
TEST_F(StoreTest, RecordCutShortIsIgnoredAndCutBackBeforeTheNextAppend) {
  const fs::path file = segment(dir_, 0);
  for (const std::uint64_t keep : {std::uint64_t{100}, kSegmentHeaderSize + 10}) {
    fs::remove_all(dir_);
    {
      const Store store(dir_.string(), "abc", 0);
      store.initialise("spec");
      store.save_done(sample_result(0));
      store.save_done(sample_result(1));
    }
    const std::uint64_t second = record_offsets(file)[1];
    fs::resize_file(file, second + keep);  // within batch 1's header, then within its payload
    const Store resumed(dir_.string(), "abc", 0);
    DoneIndex index = resumed.index_done(0, 10);
    EXPECT_TRUE(index.problems.empty());
    EXPECT_EQ(index.cut_short, std::vector<std::string>{file.string()});
    EXPECT_TRUE(resumed.load_done(index, 0, nullptr).has_value());
    EXPECT_FALSE(resumed.load_done(index, 1, nullptr).has_value());

    resumed.save_done(sample_result(1));  // recomputed after the resume
    resumed.flush_done();
    EXPECT_EQ(resumed.write_stats().files, 0);  // appended to, not created
    EXPECT_EQ(record_offsets(file), (std::vector<std::uint64_t>{0, second}));
    index = resumed.index_done(0, 10);
    EXPECT_TRUE(index.cut_short.empty());
    EXPECT_TRUE(index.problems.empty());
    EXPECT_TRUE(resumed.load_done(index, 1, nullptr).has_value());
  }
}

// Finished batches are gathered and written together: nothing reaches the segment until
// flush_done(), 1 MiB of records, or the store's end; then every record is there, in order.
TEST_F(StoreTest, GatheredRecordsAreWrittenTogether) {
  const fs::path file = segment(dir_, 0);
  {
    const Store store(dir_.string(), "abc", 0);
    store.initialise("spec");
    for (std::int64_t b : {0, 1, 2}) store.save_done(sample_result(b));
    EXPECT_EQ(fs::file_size(file), 0u);  // created with the first batch, still empty
    store.flush_done();
    EXPECT_EQ(record_offsets(file).size(), 3u);
    run::BatchResult big = sample_result(3);
    big.trajectory.assign((std::size_t{1} << 20) / 8 / 3, 0.25);  // a third of a MiB
    for (std::int64_t b : {3, 4}) {
      big.batch_index = b;
      store.save_done(big);
    }
    EXPECT_EQ(record_offsets(file).size(), 3u);
    big.batch_index = 5;
    store.save_done(big);  // past 1 MiB gathered
    EXPECT_EQ(record_offsets(file).size(), 6u);
    store.save_done(sample_result(6));
    EXPECT_EQ(record_offsets(file).size(), 6u);
  }  // the store's end writes batch 6
  const Store reader(dir_.string(), "abc", 1);
  const DoneIndex index = reader.index_done(0, 10);
  EXPECT_EQ(index.batches.size(), 7u);
  EXPECT_TRUE(index.problems.empty());
}

// A batch recomputed after damage has several records: the first sound one is used.
TEST_F(StoreTest, FirstSoundRecordOfABatchIsUsed) {
  const Store rank0(dir_.string(), "abc", 0), rank1(dir_.string(), "abc", 1);
  rank0.initialise("spec");
  run::BatchResult first = sample_result(6), second = sample_result(6);
  second.histogram = {9, 9, 9, 9};  // tells the records apart (a real rerun gives equal ones)
  rank1.save_done(first);
  rank0.save_done(second);
  rank0.save_done(first);
  rank0.flush_done();
  rank1.flush_done();
  std::string problem;
  EXPECT_EQ(load(rank0, 6, &problem)->histogram, second.histogram);  // segment 0 comes first
  flip_bit(segment(dir_, 0), kSegmentHeaderSize + 100);
  const auto r = load(rank0, 6, &problem);
  ASSERT_TRUE(r.has_value());
  EXPECT_EQ(r->histogram, first.histogram);
}

// A segment of several read-ahead windows (1 MiB) whose payloads are short (headers read
// ahead), of 12 KB (headers past them read alone) and longer than a quarter window (read
// directly), with a damaged header far into the file and a last record cut short: every other
// batch is indexed and read back exactly, whichever window boundary its header or payload
// straddles.
TEST_F(StoreTest, LargeSegmentIsReadExactlyAcrossReadAheadWindows) {
  const Store store(dir_.string(), "abc", 0);
  store.initialise("spec");
  const auto result = [](std::int64_t b) {
    run::BatchResult r = sample_result(b);
    const std::int64_t values = b == 700 ? 40000 : b % 50 == 7 ? 1500 : 1 + b % 97;
    r.trajectory.assign(static_cast<std::size_t>(values), 0.5 + static_cast<double>(b));
    return r;
  };
  const std::int64_t n = 1500;
  for (std::int64_t b = 0; b < n; ++b) store.save_done(result(b));
  store.flush_done();
  const fs::path file = segment(dir_, 0);
  const std::vector<std::uint64_t> at = record_offsets(file);
  ASSERT_EQ(at.size(), static_cast<std::size_t>(n));
  ASSERT_GT(at[n - 1], std::uint64_t{2} << 20);
  flip_bit(file, at[1200] + 20);                                // batch 1200's header
  fs::resize_file(file, at[n - 1] + kSegmentHeaderSize + 5);  // the last batch cut short

  const Store reader(dir_.string(), "abc", 1);
  const DoneIndex index = reader.index_done(0, n);
  ASSERT_EQ(index.problems.size(), 1u);
  EXPECT_NE(index.problems[0].find("record header at byte " + std::to_string(at[1200])),
            std::string::npos)
      << index.problems[0];
  EXPECT_EQ(index.cut_short.size(), 1u);
  for (std::int64_t b = 0; b < n; ++b) {
    std::string problem;
    const auto r = reader.load_done(index, b, &problem);
    ASSERT_EQ(r.has_value(), b != 1200 && b != n - 1) << "batch " << b << ": " << problem;
    if (!r) continue;
    const run::BatchResult want = result(b);
    EXPECT_EQ(r->batch_index, b);
    EXPECT_TRUE(same_bits(r->trajectory, want.trajectory)) << "batch " << b;
    EXPECT_TRUE(same_bits(r->time_mean, want.time_mean)) << "batch " << b;
  }
}

// Whatever bytes are flipped or wherever the segment is cut, a batch is either found with its
// exact numbers or not found; the scan never fails.
TEST_F(StoreTest, RandomDamageNeverGivesAWrongBatch) {
  const Store store(dir_.string(), "abc", 0);
  store.initialise("spec");
  for (std::int64_t b = 0; b < 6; ++b) store.save_done(sample_result(b));
  store.flush_done();
  const std::string pristine = read_file(segment(dir_, 0).string());
  std::mt19937_64 random(12345);
  int found = 0;
  for (int trial = 0; trial < 300; ++trial) {
    std::string bytes = pristine;
    for (int k = 0; k < 1 + trial % 3; ++k) {
      bytes[random() % bytes.size()] ^= static_cast<char>(1 + random() % 255);
    }
    if (trial % 4 == 0) bytes.resize(random() % bytes.size());
    std::ofstream(segment(dir_, 0), std::ios::binary | std::ios::trunc) << bytes;
    const Store reader(dir_.string(), "abc", 1);
    const DoneIndex index = reader.index_done(0, 6);
    for (std::int64_t b = 0; b < 6; ++b) {
      const auto r = reader.load_done(index, b, nullptr);
      if (!r) continue;
      ++found;
      const run::BatchResult want = sample_result(b);
      EXPECT_EQ(r->batch_index, b);
      EXPECT_TRUE(same_bits(r->initial_state, want.initial_state));
      EXPECT_TRUE(same_bits(r->time_mean, want.time_mean));
      EXPECT_EQ(r->histogram, want.histogram);
    }
  }
  EXPECT_GT(found, 300);  // most batches survive a few flipped bytes
}

TEST_F(StoreTest, CheckpointOfAnotherSpecIsRefused) {
  Store(dir_.string(), "spec-one", 0).initialise("one");
  Store(dir_.string(), "spec-one", 0).save_done(sample_result(1));
  const Store other(dir_.string(), "spec-two", 0);
  const DoneIndex index = other.index_done(0, 10);
  EXPECT_FALSE(other.load_done(index, 1, nullptr).has_value());
  ASSERT_EQ(index.problems.size(), 1u);
  EXPECT_NE(index.problems[0].find("different spec"), std::string::npos) << index.problems[0];
}

// Checkpoints of the format with one file per finished batch are recognised (and refused).
TEST_F(StoreTest, OlderFormatIsRecognised) {
  const Store store(dir_.string(), "abc", 0);
  store.initialise("spec");
  store.save_done(sample_result(0));
  EXPECT_FALSE(store.holds_older_format());
  std::ofstream(dir_ / "done" / "batch-0000000003.ckpt") << "CWCKPT01";
  EXPECT_TRUE(store.holds_older_format());
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
  const Store store(dir_.string(), "abc", 0);
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
  const Store store(dir_.string(), "abc", 0);
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
  const Store store(dir_.string(), "abc", 0);
  store.initialise("spec");
  store.begin_generation(1);  // a generation being written when the failure came
  EXPECT_TRUE(store.remove_if_nothing_saved());
  EXPECT_FALSE(fs::exists(dir_));

  store.initialise("spec");
  store.save_done(sample_result(4));
  EXPECT_FALSE(store.remove_if_nothing_saved());
  EXPECT_TRUE(fs::exists(segment(dir_, 0)));
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
  std::string body;
  encode_body(r, &body);
  EXPECT_EQ(encode(r), body + sha256_hex(body));  // the body is the record before its digest
  EXPECT_EQ(decode_body(body, "mem").byte_array("b"), (std::vector<std::uint8_t>{1, 2, 255}));
  EXPECT_THROW(decode_body(body.substr(0, body.size() - 1), "mem"), CorruptCheckpoint);
}

}  // namespace
}  // namespace chaosweep::checkpoint
