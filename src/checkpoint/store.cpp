// The checkpoint directory of one campaign (see store.hpp).
#include "checkpoint/store.hpp"

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <type_traits>

#include "checkpoint/files.hpp"
#include "checkpoint/record.hpp"
#include "results/table.hpp"

namespace chaosweep::checkpoint {
namespace {

namespace fs = std::filesystem;

std::string numbered(const char* prefix, std::int64_t n, int digits) {
  char text[64];
  std::snprintf(text, sizeof text, "%s%0*lld", prefix, digits, static_cast<long long>(n));
  return text;
}

/// Parses "segment-RRRRR.ckpt" (five or more digits); -1 for anything else.
int segment_rank(const std::string& name) {
  const std::string prefix = "segment-", suffix = ".ckpt";
  if (name.size() < prefix.size() + 5 + suffix.size() || name.rfind(prefix, 0) != 0 ||
      name.compare(name.size() - suffix.size(), suffix.size(), suffix) != 0) {
    return -1;
  }
  const std::string digits =
      name.substr(prefix.size(), name.size() - prefix.size() - suffix.size());
  if (digits.size() > 9 ||
      !std::all_of(digits.begin(), digits.end(), [](char c) { return c >= '0' && c <= '9'; })) {
    return -1;
  }
  return std::stoi(digits);
}

/// Parses "gen-NNNNNNNN"; -1 for anything else.
std::int64_t generation_number(const std::string& name) {
  if (name.size() != 12 || name.rfind("gen-", 0) != 0) return -1;
  if (!std::all_of(name.begin() + 4, name.end(), [](char c) { return c >= '0' && c <= '9'; })) {
    return -1;
  }
  return std::stoll(name.substr(4));
}

/// The array `name` of a record, empty when the record has none (to_record leaves out empty
/// arrays).
template <class T>
std::vector<T> array_or_empty(const std::vector<std::pair<std::string, std::vector<T>>>& arrays,
                              const std::string& name) {
  for (const auto& [n, values] : arrays) {
    if (n == name) return values;
  }
  return {};
}

/// A finished batch as a record: its identity, then every array the results table declares
/// for a batch (the member rows it kept, per-batch partials), under the quantity's name, empty
/// ones left out, and the batch's summary for the reduction ("summary", "summary_counts").
Record to_record(const run::BatchResult& r, const std::string& sha) {
  Record rec;
  rec.header = {{"kind", "done"}, {"spec_sha256", sha}, {"batch", std::to_string(r.batch_index)}};
  rec.integers = {{"ids", {r.batch_index, r.case_index, r.first_member, r.count,
                           r.trajectory_members}}};
  results::for_each_array(r, [&](const results::Quantity& q, const auto& values) {
    using T = typename std::decay_t<decltype(values)>::value_type;
    if (values.empty()) return;  // absent reads back as empty (most arrays once summarised)
    if constexpr (std::is_same_v<T, double>) {
      rec.reals.emplace_back(q.name, values);
    } else if constexpr (std::is_same_v<T, std::int64_t>) {
      rec.integers.emplace_back(q.name, values);
    } else if constexpr (std::is_same_v<T, std::uint8_t>) {
      rec.bytes.emplace_back(q.name, values);
    }
  });
  rec.reals.emplace_back("summary", r.summary);
  rec.integers.emplace_back("summary_counts", r.summary_counts);
  return rec;
}

run::BatchResult to_result(const Record& rec) {
  run::BatchResult r;
  const std::vector<std::int64_t>& ids = rec.integer("ids");
  if (ids.size() != 5) throw CorruptCheckpoint("checkpoint record has malformed ids");
  r.batch_index = ids[0];
  r.case_index = ids[1];
  r.first_member = ids[2];
  r.count = static_cast<int>(ids[3]);
  r.trajectory_members = static_cast<int>(ids[4]);
  results::for_each_array(r, [&](const results::Quantity& q, auto& values) {
    using T = typename std::decay_t<decltype(values)>::value_type;
    if constexpr (std::is_same_v<T, double>) {
      values = array_or_empty(rec.reals, q.name);
    } else if constexpr (std::is_same_v<T, std::int64_t>) {
      values = array_or_empty(rec.integers, q.name);
    } else if constexpr (std::is_same_v<T, std::uint8_t>) {
      values = array_or_empty(rec.bytes, q.name);
    }
  });
  r.summary = rec.real("summary");
  r.summary_counts = rec.integer("summary_counts");
  return r;
}

/// Reads and verifies a record of `kind` for this campaign; nullopt when the file is absent.
std::optional<Record> load_record(const std::string& path, const std::string& kind,
                                  const std::string& sha, std::string* problem) {
  std::error_code ec;
  if (!fs::exists(path, ec)) return std::nullopt;
  try {
    Record rec = decode(read_file(path), path);
    if (rec.field("kind") != kind) throw CorruptCheckpoint(path + ": not a " + kind + " record");
    if (rec.field("spec_sha256") != sha) {
      throw CorruptCheckpoint(path + ": written for a different spec");
    }
    return rec;
  } catch (const Error& e) {
    if (problem) *problem = e.what();
    return std::nullopt;
  }
}

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

}  // namespace

Store::Store(std::string directory, std::string spec_sha256, int rank)
    : directory_(std::move(directory)), spec_sha256_(std::move(spec_sha256)), rank_(rank) {}

void Store::write(const std::string& path, const std::string& bytes) const {
  const auto start = std::chrono::steady_clock::now();
  write_atomically(path, bytes);
  stats_.files += 1;
  stats_.bytes += static_cast<double>(bytes.size());
  stats_.seconds += seconds_since(start);
}

std::string Store::segment_path(int rank) const {
  return directory_ + "/done/" + numbered("segment-", rank, 5) + ".ckpt";
}

std::vector<std::pair<int, std::string>> Store::segments() const {
  std::vector<std::pair<int, std::string>> found;
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(directory_ + "/done", ec)) {
    const int rank = segment_rank(entry.path().filename().string());
    if (rank >= 0) found.emplace_back(rank, entry.path().string());
  }
  std::sort(found.begin(), found.end());
  return found;
}

std::string Store::generation_path(std::int64_t generation, bool partial) const {
  return directory_ + "/" + numbered("gen-", generation, 8) + (partial ? ".partial" : "");
}

bool Store::has_content() const {
  std::error_code ec;
  if (!fs::is_directory(directory_, ec)) return false;
  for (const auto& entry : fs::directory_iterator(directory_, ec)) {
    const std::string name = entry.path().filename().string();
    if (name == "campaign.yaml" || name == "done" || name.rfind("gen-", 0) == 0) return true;
  }
  return false;
}

bool Store::holds_older_format() const {
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(directory_ + "/done", ec)) {
    const std::string name = entry.path().filename().string();
    if (name.rfind("batch-", 0) == 0 && entry.path().extension() == ".ckpt") return true;
  }
  return false;
}

std::string Store::stored_spec() const {
  std::error_code ec;
  const std::string path = directory_ + "/campaign.yaml";
  return fs::exists(path, ec) ? read_file(path) : std::string();
}

void Store::initialise(const std::string& spec_text) const {
  std::error_code ec;
  fs::create_directories(directory_ + "/done", ec);
  if (ec) throw IoError("cannot create checkpoint directory " + directory_ + ": " + ec.message());
  write(directory_ + "/campaign.yaml", spec_text);
}

void Store::remove_leftovers() const {
  std::error_code ec;
  for (const std::string& sub : {directory_, directory_ + "/done"}) {
    for (const auto& entry : fs::directory_iterator(sub, ec)) {
      const std::string name = entry.path().filename().string();
      const bool tmp = name.size() > 4 && name.compare(name.size() - 4, 4, ".tmp") == 0;
      const bool partial = name.rfind("gen-", 0) == 0 && name.find(".partial") != std::string::npos;
      if (tmp || partial) fs::remove_all(entry.path(), ec);
    }
  }
}

void Store::save_done(const run::BatchResult& result) const {
  const auto start = std::chrono::steady_clock::now();
  if (!segment_) {
    bool created = false;
    segment_ = std::make_unique<SegmentWriter>(segment_path(rank_), spec_sha256_, &created);
    if (created) {
      stats_.files += 1;
      directory_unsynced_ = true;
    }
  }
  record_.assign(kSegmentHeaderSize, '\0');  // room for the header, then the payload
  encode_body(to_record(result, spec_sha256_), &record_);
  seal_segment_record(&record_, result.batch_index, spec_sha256_);
  pending_ += record_;
  stats_.bytes += static_cast<double>(record_.size());
  stats_.seconds += seconds_since(start);
  if (pending_.size() >= kFlushBytes) flush_done();
}

Store::~Store() {
  try {
    flush_done();
  } catch (...) {  // NOLINT(bugprone-empty-catch): a resume redoes the batches not written
  }
}

void Store::flush_done() const {
  if (pending_.empty()) return;
  const auto start = std::chrono::steady_clock::now();
  segment_->append(pending_);  // all or nothing: on failure the segment is cut back
  pending_.clear();
  segment_unsynced_ = true;
  stats_.seconds += seconds_since(start);
}

void Store::sync_done() const {
  flush_done();
  if (!segment_unsynced_ && !directory_unsynced_) return;
  const auto start = std::chrono::steady_clock::now();
  if (segment_unsynced_) segment_->sync();
  if (directory_unsynced_) sync_directory(directory_ + "/done");
  segment_unsynced_ = directory_unsynced_ = false;
  stats_.seconds += seconds_since(start);
}

std::vector<std::string> Store::segment_paths() const {
  std::vector<std::string> paths;
  for (auto& [rank, path] : segments()) paths.push_back(std::move(path));
  return paths;
}

void Store::index_segment(DoneIndex& index, std::size_t k, std::int64_t first,
                          std::int64_t last) const {
  const std::string& path = index.segments.at(k);
  SegmentScan scan;
  try {
    scan = scan_segment(path, spec_sha256_);
  } catch (const Error& e) {  // unreadable: its batches are recomputed
    index.problems.push_back(std::string(e.what()) + " (damaged checkpoint)");
    return;
  }
  for (const SegmentEntry& entry : scan.entries) {
    if (entry.batch >= first && entry.batch < last) index.batches[entry.batch].push_back({k, entry});
  }
  for (std::string& p : scan.problems) index.problems.push_back(std::move(p));
  if (scan.cut_short) index.cut_short.push_back(path);
}

DoneIndex Store::index_done(std::int64_t first, std::int64_t last) const {
  DoneIndex index;
  index.segments = segment_paths();
  for (std::size_t k = 0; k < index.segments.size(); ++k) index_segment(index, k, first, last);
  return index;
}

std::optional<run::BatchResult> Store::load_done(const DoneIndex& index, std::int64_t batch,
                                                 std::string* problem) const {
  const auto found = index.batches.find(batch);
  if (found == index.batches.end()) return std::nullopt;
  std::string first_problem;
  for (const DoneIndex::Location& at : found->second) {  // the first sound record wins
    const std::string& path = index.segments[at.segment];
    try {
      if (!index.reader || index.reader->path() != path) {
        index.reader.reset();
        index.reader = std::make_unique<SegmentReader>(path);
      }
      const Record rec = decode_body(index.reader->payload(at.entry), path);
      if (rec.field("kind") != "done") throw CorruptCheckpoint(path + ": not a done record");
      if (rec.field("spec_sha256") != spec_sha256_) {
        throw CorruptCheckpoint(path + ": written for a different spec");
      }
      run::BatchResult r = to_result(rec);
      if (r.batch_index != batch) {
        throw CorruptCheckpoint(path + ": record of batch " + std::to_string(batch) +
                                " holds batch " + std::to_string(r.batch_index));
      }
      return r;
    } catch (const Error& e) {
      if (first_problem.empty()) first_problem = e.what();
    }
  }
  if (problem) *problem = first_problem;
  return std::nullopt;
}

void Store::begin_generation(std::int64_t generation) const {
  std::error_code ec;
  fs::create_directories(generation_path(generation, true), ec);
  if (ec) throw IoError("cannot create " + generation_path(generation, true) + ": " + ec.message());
}

void Store::save_state(std::int64_t generation, const run::BatchState& state) const {
  Record rec;
  rec.header = {{"kind", "state"},
                {"spec_sha256", spec_sha256_},
                {"batch", std::to_string(state.batch_index)},
                {"step", std::to_string(state.step)}};
  rec.reals = state.reals;
  rec.integers = state.integers;
  write(generation_path(generation, true) + "/" +
                       numbered("batch-", state.batch_index, 10) + ".ckpt",
                   encode(rec));
}

void Store::commit_generation(std::int64_t generation, const std::vector<std::int64_t>& batches,
                              int keep) const {
  manifests_.clear();
  Record manifest;
  manifest.header = {{"kind", "manifest"},
                     {"spec_sha256", spec_sha256_},
                     {"generation", std::to_string(generation)}};
  manifest.integers = {{"batches", batches}};
  const std::string partial = generation_path(generation, true);
  write(partial + "/MANIFEST", encode(manifest));
  const std::string final_path = generation_path(generation, false);
  if (std::rename(partial.c_str(), final_path.c_str()) != 0) {
    throw IoError("cannot rename " + partial + " to " + final_path);
  }
  sync_directory(directory_);
  const std::vector<std::int64_t> all = generations();
  std::error_code ec;
  for (std::size_t i = static_cast<std::size_t>(keep); i < all.size(); ++i) {
    fs::remove_all(generation_path(all[i], false), ec);
  }
}

std::vector<std::int64_t> Store::generations() const {
  std::vector<std::int64_t> found;
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(directory_, ec)) {
    const std::int64_t n = generation_number(entry.path().filename().string());
    if (n >= 0) found.push_back(n);
  }
  std::sort(found.rbegin(), found.rend());
  return found;
}

std::optional<run::BatchState> Store::load_state(std::int64_t generation, std::int64_t batch,
                                                 std::string* problem) const {
  const std::string dir = generation_path(generation, false);
  auto known = manifests_.find(generation);
  if (known == manifests_.end()) {  // read once: a resume asks for every batch of the rank
    Manifest m;
    std::string why;
    const std::optional<Record> manifest =
        load_record(dir + "/MANIFEST", "manifest", spec_sha256_, &why);
    if (manifest) {
      m.batches = manifest->integer("batches");
      std::sort(m.batches->begin(), m.batches->end());
    } else {
      m.problem = why.empty() ? dir + ": no manifest" : why;
    }
    known = manifests_.emplace(generation, std::move(m)).first;
  }
  if (!known->second.batches) {
    if (problem) *problem = known->second.problem;
    return std::nullopt;
  }
  const std::vector<std::int64_t>& listed = *known->second.batches;
  if (!std::binary_search(listed.begin(), listed.end(), batch)) return std::nullopt;
  const std::string path = dir + "/" + numbered("batch-", batch, 10) + ".ckpt";
  std::optional<Record> rec = load_record(path, "state", spec_sha256_, problem);
  if (!rec) {
    if (problem && problem->empty()) *problem = path + ": missing";
    return std::nullopt;
  }
  run::BatchState state;
  state.batch_index = batch;
  state.step = std::stoll(rec->field("step"));
  state.reals = std::move(rec->reals);
  state.integers = std::move(rec->integers);
  return state;
}

void Store::remove_all() const {
  pending_.clear();
  segment_.reset();
  manifests_.clear();
  segment_unsynced_ = directory_unsynced_ = false;
  std::error_code ec;
  fs::remove(directory_ + "/campaign.yaml", ec);
  fs::remove_all(directory_ + "/done", ec);
  for (std::int64_t g : generations()) fs::remove_all(generation_path(g, false), ec);
  remove_leftovers();
  fs::remove(directory_, ec);  // only if now empty
}

bool Store::remove_if_nothing_saved() const {
  flush_done();  // finished batches gathered in memory count as saved
  for (const auto& [rank, path] : segments()) {
    try {
      if (!scan_segment(path, spec_sha256_).entries.empty()) return false;
    } catch (const Error&) {
      return false;  // unreadable: keep it rather than guess
    }
  }
  if (!generations().empty()) return false;
  remove_all();
  return true;
}

}  // namespace chaosweep::checkpoint
