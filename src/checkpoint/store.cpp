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

/// Parses "gen-NNNNNNNN"; -1 for anything else.
std::int64_t generation_number(const std::string& name) {
  if (name.size() != 12 || name.rfind("gen-", 0) != 0) return -1;
  if (!std::all_of(name.begin() + 4, name.end(), [](char c) { return c >= '0' && c <= '9'; })) {
    return -1;
  }
  return std::stoll(name.substr(4));
}

/// A finished batch as a record: its identity, then every array the results table declares
/// for a batch (per-member rows and per-batch summaries), under the quantity's name.
Record to_record(const run::BatchResult& r, const std::string& sha) {
  Record rec;
  rec.header = {{"kind", "done"}, {"spec_sha256", sha}, {"batch", std::to_string(r.batch_index)}};
  rec.integers = {{"ids", {r.batch_index, r.case_index, r.first_member, r.count,
                           r.trajectory_members}}};
  results::for_each_array(r, [&](const results::Quantity& q, const auto& values) {
    using T = typename std::decay_t<decltype(values)>::value_type;
    if constexpr (std::is_same_v<T, double>) {
      rec.reals.emplace_back(q.name, values);
    } else if constexpr (std::is_same_v<T, std::int64_t>) {
      rec.integers.emplace_back(q.name, values);
    } else if constexpr (std::is_same_v<T, std::uint8_t>) {
      rec.bytes.emplace_back(q.name, values);
    }
  });
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
      values = rec.real(q.name);
    } else if constexpr (std::is_same_v<T, std::int64_t>) {
      values = rec.integer(q.name);
    } else if constexpr (std::is_same_v<T, std::uint8_t>) {
      values = rec.byte_array(q.name);
    }
  });
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

}  // namespace

Store::Store(std::string directory, std::string spec_sha256)
    : directory_(std::move(directory)), spec_sha256_(std::move(spec_sha256)) {}

void Store::write(const std::string& path, const std::string& bytes, bool durable) const {
  const auto start = std::chrono::steady_clock::now();
  write_atomically(path, bytes, durable);
  stats_.files += 1;
  stats_.bytes += static_cast<double>(bytes.size());
  stats_.seconds +=
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

std::string Store::done_path(std::int64_t batch) const {
  return directory_ + "/done/" + numbered("batch-", batch, 10) + ".ckpt";
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
  const std::string path = done_path(result.batch_index);
  write(path, encode(to_record(result, spec_sha256_)), false);
  unsynced_.push_back(path);
}

void Store::sync_done() const {
  if (unsynced_.empty()) return;
  const auto start = std::chrono::steady_clock::now();
  for (const std::string& path : unsynced_) sync_file(path);
  sync_directory(directory_ + "/done");
  unsynced_.clear();
  stats_.seconds +=
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

std::optional<run::BatchResult> Store::load_done(std::int64_t batch, std::string* problem) const {
  const std::optional<Record> rec = load_record(done_path(batch), "done", spec_sha256_, problem);
  if (!rec) return std::nullopt;
  try {
    run::BatchResult r = to_result(*rec);
    if (r.batch_index != batch) throw CorruptCheckpoint(done_path(batch) + ": wrong batch");
    return r;
  } catch (const Error& e) {
    if (problem) *problem = e.what();
    return std::nullopt;
  }
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
  std::string why;
  const std::optional<Record> manifest = load_record(dir + "/MANIFEST", "manifest", spec_sha256_, &why);
  if (!manifest) {
    if (problem) *problem = why.empty() ? dir + ": no manifest" : why;
    return std::nullopt;
  }
  const std::vector<std::int64_t>& listed = manifest->integer("batches");
  if (std::find(listed.begin(), listed.end(), batch) == listed.end()) return std::nullopt;
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
  std::error_code ec;
  fs::remove(directory_ + "/campaign.yaml", ec);
  fs::remove_all(directory_ + "/done", ec);
  for (std::int64_t g : generations()) fs::remove_all(generation_path(g, false), ec);
  remove_leftovers();
  fs::remove(directory_, ec);  // only if now empty
}

bool Store::remove_if_nothing_saved() const {
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(directory_ + "/done", ec)) {
    if (entry.path().extension() == ".ckpt") return false;
  }
  if (!generations().empty()) return false;
  remove_all();
  return true;
}

}  // namespace chaosweep::checkpoint
