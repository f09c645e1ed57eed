// SHA-256 through Nettle's sha256 functions (see sha256.hpp).
#include "core/sha256.hpp"

namespace chaosweep {

Sha256::Sha256() { sha256_init(&context_); }

void Sha256::update(const void* data, std::size_t n) {
  sha256_update(&context_, n, static_cast<const std::uint8_t*>(data));
}

std::string Sha256::hex() {
  std::uint8_t digest[SHA256_DIGEST_SIZE];
  sha256_digest(&context_, SHA256_DIGEST_SIZE, digest);
  static constexpr char kHex[] = "0123456789abcdef";
  std::string text;
  text.reserve(2 * SHA256_DIGEST_SIZE);
  for (std::uint8_t byte : digest) {
    text += kHex[byte >> 4];
    text += kHex[byte & 0xf];
  }
  return text;
}

std::string sha256_hex(const std::string& bytes) {
  Sha256 sha;
  sha.update(bytes.data(), bytes.size());
  return sha.hex();
}

}  // namespace chaosweep
