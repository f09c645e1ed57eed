// Shared by the libFuzzer programs: a finding is printed on one line and the process aborts,
// which libFuzzer records as a crash and saves the input that caused it.
#pragma once

#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>

#include "fuzz/entries.hpp"

namespace chaosweep::fuzz {

inline std::string as_text(const std::uint8_t* data, std::size_t size) {
  return std::string(reinterpret_cast<const char*>(data), size);
}

inline void abort_on_finding(const Outcome& outcome) {
  if (outcome.clean) return;
  std::fprintf(stderr, "chaosweep fuzz finding: %s\n", outcome.what.c_str());
  std::abort();
}

}  // namespace chaosweep::fuzz
