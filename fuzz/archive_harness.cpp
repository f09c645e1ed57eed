// libFuzzer harness of the archive reader: every input is the content of an archive file,
// written to a scratch file of this process (see entries.hpp). The scratch file lives in
// $CHAOSWEEP_FUZZ_SCRATCH, or else the system's temporary directory.
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <string>

#include "fuzz/entries.hpp"
#include "fuzz/harness.hpp"

namespace {

std::string scratch_path;

}  // namespace

extern "C" int LLVMFuzzerInitialize(int*, char***) {
  const char* dir = std::getenv("CHAOSWEEP_FUZZ_SCRATCH");
  const std::filesystem::path base =
      dir != nullptr && dir[0] != '\0' ? std::filesystem::path(dir)
                                       : std::filesystem::temp_directory_path();
  scratch_path = (base / ("chaosweep-fuzz-archive-" + std::to_string(::getpid()) + ".h5")).string();
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  chaosweep::fuzz::abort_on_finding(
      chaosweep::fuzz::check_archive(chaosweep::fuzz::as_text(data, size), scratch_path));
  return 0;
}
