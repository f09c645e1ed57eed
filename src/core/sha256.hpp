// SHA-256 of a byte string, as lower-case hex. Pure: no dependencies.
// Used to fingerprint the campaign spec (archive attribute spec_sha256, checkpoint keys) and
// to seal archives (archive/seal.hpp).
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
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
  std::array<std::uint32_t, 8> h_;
  std::array<unsigned char, 64> block_{};  // bytes not yet compressed
  std::size_t used_ = 0;                   // of block_
  std::uint64_t length_ = 0;               // bytes given so far
};

}  // namespace chaosweep
