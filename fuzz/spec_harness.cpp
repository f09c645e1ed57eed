// libFuzzer harness of the spec loader: every input is spec text (see entries.hpp).
#include "fuzz/entries.hpp"
#include "fuzz/harness.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  chaosweep::fuzz::abort_on_finding(chaosweep::fuzz::check_spec(chaosweep::fuzz::as_text(data, size)));
  return 0;
}
