// SHA-256 of a byte string, as lower-case hex, computed by Nettle (Debian's nettle-dev).
// Used to fingerprint the campaign spec (archive attribute spec_sha256, checkpoint keys) and
// to seal archives (archive/seal.hpp).
#pragma once

#include <nettle/sha2.h>

#include <cstddef>
#include <string>

namespace chaosweep {

/// SHA-256 digest of `bytes` as 64 lower-case hex characters.
std::string sha256_hex(const std::string& bytes);

/// SHA-256 of a message given in pieces of any sizes: update() as often as needed, then hex()
/// once. The digest equals sha256_hex of the concatenated pieces.
class Sha256 {
 public:
  Sha256();
  void update(const void* data, std::size_t n);
  /// The digest as 64 lower-case hex characters; the object is spent afterwards.
  std::string hex();

 private:
  sha256_ctx context_;
};

}  // namespace chaosweep
