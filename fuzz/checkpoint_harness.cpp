// libFuzzer harness of the checkpoint decoder; the first input byte chooses whether the rest
// gets a valid checksum appended (see entries.hpp).
#include "fuzz/entries.hpp"
#include "fuzz/harness.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  chaosweep::fuzz::abort_on_finding(
      chaosweep::fuzz::check_checkpoint(chaosweep::fuzz::as_text(data, size)));
  return 0;
}
