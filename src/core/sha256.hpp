// SHA-256 of a byte string, as lower-case hex. Pure: no dependencies.
// Used to fingerprint the campaign spec (archive attribute spec_sha256, checkpoint keys).
#pragma once

#include <string>

namespace chaosweep {

/// SHA-256 digest of `bytes` as 64 lower-case hex characters.
std::string sha256_hex(const std::string& bytes);

}  // namespace chaosweep
