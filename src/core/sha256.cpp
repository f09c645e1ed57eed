// SHA-256 as specified in FIPS 180-4 "Secure Hash Standard" (NIST, 2015), sections 4.1.2,
// 4.2.2, 5.1.1, 5.3.3 and 6.2. Pure: no dependencies beyond the standard library.
#include "core/sha256.hpp"

#include <algorithm>
#include <array>
#include <cstdint>
#include <cstring>

namespace chaosweep {
namespace {

using Word = std::uint32_t;

// FIPS 180-4 section 4.2.2: the first 32 bits of the fractional parts of the cube roots of
// the first 64 primes.
constexpr std::array<Word, 64> kRound = {
    0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4,
    0xab1c5ed5, 0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe,
    0x9bdc06a7, 0xc19bf174, 0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f,
    0x4a7484aa, 0x5cb0a9dc, 0x76f988da, 0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7,
    0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967, 0x27b70a85, 0x2e1b2138, 0x4d2c6dfc,
    0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85, 0xa2bfe8a1, 0xa81a664b,
    0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070, 0x19a4c116,
    0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3,
    0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7,
    0xc67178f2};

// FIPS 180-4 section 5.3.3: the first 32 bits of the fractional parts of the square roots of
// the first 8 primes.
constexpr std::array<Word, 8> kInitial = {0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                                          0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19};

constexpr Word rotr(Word x, int n) { return (x >> n) | (x << (32 - n)); }

// The six logical functions of section 4.1.2.
constexpr Word ch(Word x, Word y, Word z) { return (x & y) ^ (~x & z); }
constexpr Word maj(Word x, Word y, Word z) { return (x & y) ^ (x & z) ^ (y & z); }
constexpr Word big_sigma0(Word x) { return rotr(x, 2) ^ rotr(x, 13) ^ rotr(x, 22); }
constexpr Word big_sigma1(Word x) { return rotr(x, 6) ^ rotr(x, 11) ^ rotr(x, 25); }
constexpr Word small_sigma0(Word x) { return rotr(x, 7) ^ rotr(x, 18) ^ (x >> 3); }
constexpr Word small_sigma1(Word x) { return rotr(x, 17) ^ rotr(x, 19) ^ (x >> 10); }

/// Section 6.2.2: folds one 64-byte block (big-endian words) into the hash state.
void compress(std::array<Word, 8>& h, const unsigned char* block) {
  std::array<Word, 64> w{};  // message schedule W_0 .. W_63
  for (int t = 0; t < 16; ++t) {
    w[t] = (Word(block[4 * t]) << 24) | (Word(block[4 * t + 1]) << 16) |
           (Word(block[4 * t + 2]) << 8) | Word(block[4 * t + 3]);
  }
  for (int t = 16; t < 64; ++t) {
    w[t] = small_sigma1(w[t - 2]) + w[t - 7] + small_sigma0(w[t - 15]) + w[t - 16];
  }
  Word a = h[0], b = h[1], c = h[2], d = h[3], e = h[4], f = h[5], g = h[6], hh = h[7];
  for (int t = 0; t < 64; ++t) {
    const Word t1 = hh + big_sigma1(e) + ch(e, f, g) + kRound[t] + w[t];
    const Word t2 = big_sigma0(a) + maj(a, b, c);
    hh = g;
    g = f;
    f = e;
    e = d + t1;
    d = c;
    c = b;
    b = a;
    a = t1 + t2;
  }
  h[0] += a; h[1] += b; h[2] += c; h[3] += d;
  h[4] += e; h[5] += f; h[6] += g; h[7] += hh;
}

}  // namespace

Sha256::Sha256() : h_(kInitial) {}

void Sha256::update(const void* data, std::size_t n) {
  const auto* bytes = static_cast<const unsigned char*>(data);
  length_ += n;
  if (used_ > 0) {  // complete the pending block first
    const std::size_t take = std::min(n, block_.size() - used_);
    std::memcpy(block_.data() + used_, bytes, take);
    used_ += take;
    bytes += take;
    n -= take;
    if (used_ < block_.size()) return;
    compress(h_, block_.data());
    used_ = 0;
  }
  for (; n >= 64; bytes += 64, n -= 64) compress(h_, bytes);
  if (n > 0) std::memcpy(block_.data(), bytes, n);
  used_ = n;
}

std::string Sha256::hex() {
  // Section 5.1.1 padding: the message, one 1 bit, zeros up to 56 mod 64 bytes, then the
  // message length in bits as a 64-bit big-endian integer. One or two final blocks.
  unsigned char tail[128] = {};
  if (used_ > 0) std::memcpy(tail, block_.data(), used_);
  tail[used_] = 0x80;
  const std::size_t tail_len = used_ < 56 ? 64 : 128;
  const std::uint64_t bits = length_ * 8u;
  for (int i = 0; i < 8; ++i) {
    tail[tail_len - 1 - i] = static_cast<unsigned char>(bits >> (8 * i));
  }
  for (std::size_t i = 0; i < tail_len; i += 64) compress(h_, tail + i);
  used_ = 0;

  static const char* const kHex = "0123456789abcdef";
  std::string out;
  out.reserve(64);
  for (Word word : h_) {
    for (int shift = 28; shift >= 0; shift -= 4) out.push_back(kHex[(word >> shift) & 0xf]);
  }
  return out;
}

std::string sha256_hex(const std::string& bytes) {
  Sha256 hash;
  hash.update(bytes.data(), bytes.size());
  return hash.hex();
}

}  // namespace chaosweep
