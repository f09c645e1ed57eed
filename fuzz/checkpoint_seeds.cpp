// Writes the seed corpus of the checkpoint harness: small records of the three kinds the
// checkpoint store writes (a finished batch, a batch in progress, a generation manifest),
// encoded by checkpoint::encode, each in both of the harness's input forms (entries.hpp):
//   0x00 + the encoded file (checksum included), and
//   0x01 + the encoded file without its checksum (the harness appends a correct one).
// Usage: fuzz_checkpoint_seeds OUTPUT_DIRECTORY
#include <cmath>
#include <cstdio>
#include <fstream>
#include <string>
#include <vector>

#include "checkpoint/record.hpp"

namespace {

using chaosweep::checkpoint::Record;

constexpr std::size_t kDigestSize = 64;  // hex SHA-256 trailer of every encoded record

Record done_batch() {
  Record r;
  r.header = {{"kind", "done"}, {"spec_sha256", std::string(64, 'a')}, {"batch", "3"}};
  r.integers = {{"ids", {3, 1, 16, 8, 2}}, {"regime_transitions", {4, 0, 7, 1}}, {"histogram", {}}};
  r.reals = {{"initial_state", {1.0, -2.5, 20.0}}, {"time_mean", {0.5, NAN, -INFINITY}},
             {"trajectory", {}}};
  r.bytes = {{"status", {0, 1, 0, 0}}};
  return r;
}

Record batch_state() {
  Record r;
  r.header = {{"kind", "state"}, {"spec_sha256", std::string(64, 'b')}, {"batch", "0"},
              {"step", "1200"}};
  r.reals = {{"x", {0.25, 0.5, 0.75, 1.0}}};
  r.integers = {{"counts", {1200, 1200}}};
  return r;
}

Record manifest() {
  Record r;
  r.header = {{"kind", "manifest"}, {"spec_sha256", std::string(64, 'c')}, {"generation", "2"}};
  r.integers = {{"batches", {0, 1, 5}}};
  return r;
}

bool write(const std::string& path, const std::string& bytes) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
  return static_cast<bool>(out);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: %s OUTPUT_DIRECTORY\n", argv[0]);
    return 2;
  }
  const std::string dir = argv[1];
  const std::vector<std::pair<std::string, Record>> records = {
      {"done", done_batch()}, {"state", batch_state()}, {"manifest", manifest()}, {"empty", Record{}}};
  for (const auto& [name, record] : records) {
    const std::string encoded = chaosweep::checkpoint::encode(record);
    const std::string body = encoded.substr(0, encoded.size() - kDigestSize);
    if (!write(dir + "/" + name + "-as-written", std::string(1, '\0') + encoded) ||
        !write(dir + "/" + name + "-checksum-appended", std::string(1, '\1') + body)) {
      std::fprintf(stderr, "cannot write seeds into %s\n", dir.c_str());
      return 1;
    }
  }
  return 0;
}
