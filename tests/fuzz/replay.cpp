// Replays inputs once found by the fuzz harnesses (tests/fixtures/fuzz/<harness>/) through the
// same checks (fuzz/entries.hpp), in an ordinary build without clang or libFuzzer. A crash or
// hang fails the test by itself; a broken contract is reported per file.
//
// Usage: fuzz_replay spec|archive|checkpoint PATH SCRATCH_DIRECTORY
//   PATH is one input file or a folder of them (every regular file, in name order); archive
//   inputs are written to a scratch file in SCRATCH_DIRECTORY before they are read.
// Exit status: 0 every input kept to the contract, 1 some did not, 2 usage or no input found.
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "fuzz/entries.hpp"

namespace fs = std::filesystem;
using chaosweep::fuzz::Outcome;

namespace {

std::vector<fs::path> inputs_at(const fs::path& path) {
  std::vector<fs::path> files;
  if (fs::is_regular_file(path)) return {path};
  if (!fs::is_directory(path)) return files;
  for (const fs::directory_entry& entry : fs::directory_iterator(path)) {
    if (entry.is_regular_file()) files.push_back(entry.path());
  }
  std::sort(files.begin(), files.end());
  return files;
}

std::string contents(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 4) {
    std::fprintf(stderr, "usage: %s spec|archive|checkpoint PATH SCRATCH_DIRECTORY\n", argv[0]);
    return 2;
  }
  const std::string harness = argv[1];
  if (harness != "spec" && harness != "archive" && harness != "checkpoint") {
    std::fprintf(stderr, "unknown harness `%s`\n", harness.c_str());
    return 2;
  }
  const std::vector<fs::path> files = inputs_at(argv[2]);
  if (files.empty()) {
    std::fprintf(stderr, "no input files at %s\n", argv[2]);
    return 2;
  }
  std::error_code ec;
  fs::create_directories(argv[3], ec);
  const std::string scratch = (fs::path(argv[3]) / "replay.h5").string();
  int broken = 0;
  for (const fs::path& file : files) {
    const std::string bytes = contents(file);
    const Outcome outcome = harness == "spec"    ? chaosweep::fuzz::check_spec(bytes)
                            : harness == "archive" ? chaosweep::fuzz::check_archive(bytes, scratch)
                                                   : chaosweep::fuzz::check_checkpoint(bytes);
    std::printf("%s %s: %s\n", outcome.clean ? "ok  " : "FAIL", file.filename().c_str(),
                outcome.what.c_str());
    if (!outcome.clean) ++broken;
  }
  std::printf("%zu inputs, %d broke the contract\n", files.size(), broken);
  return broken == 0 ? 0 : 1;
}
