// SHA-256 against the published example vectors and against coreutils' sha256sum.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <string>

#include <unistd.h>

#include "core/sha256.hpp"

namespace {

using chaosweep::sha256_hex;

// published: FIPS 180-2 (NIST, 2002), Appendix B.1, one-block message "abc".
TEST(Sha256, FipsOneBlockMessage) {
  EXPECT_EQ(sha256_hex("abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
}

// published: FIPS 180-2, Appendix B.2, the 448-bit two-block message.
TEST(Sha256, FipsTwoBlockMessage) {
  EXPECT_EQ(sha256_hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
}

// published: FIPS 180-2, Appendix B.3, one million repetitions of "a".
TEST(Sha256, FipsLongMessage) {
  EXPECT_EQ(sha256_hex(std::string(1000000, 'a')),
            "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
}

// from memory: the digest of the empty string (widely quoted); also compared with sha256sum
// below, which covers length 0.
TEST(Sha256, EmptyString) {
  EXPECT_EQ(sha256_hex(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

/// Digest of `bytes` by coreutils' sha256sum (an independent implementation), via a file.
std::string coreutils_sha256(const std::string& bytes) {
  char name[] = "/tmp/chaosweep_sha256_XXXXXX";
  const int fd = mkstemp(name);
  if (fd < 0) throw std::runtime_error("mkstemp failed");
  close(fd);
  {
    std::ofstream out(name, std::ios::binary);
    out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
    if (!out) throw std::runtime_error("cannot write a temporary file");
  }
  const std::string command = std::string("sha256sum ") + name;
  std::FILE* pipe = popen(command.c_str(), "r");
  if (!pipe) throw std::runtime_error("cannot run sha256sum");
  char digest[65] = {};
  const std::size_t n = std::fread(digest, 1, 64, pipe);
  const int status = pclose(pipe);
  std::remove(name);
  if (n != 64 || status != 0) throw std::runtime_error("sha256sum failed");
  return std::string(digest, 64);
}

// common practice: an independent implementation as oracle. Lengths around the padding
// boundaries (55/56 bytes: one or two final blocks; 63/64/65: block edges), with every byte
// value including NUL and 0xff.
TEST(Sha256, MatchesCoreutilsAtPaddingBoundaries) {
  for (std::size_t len : {0, 1, 55, 56, 57, 63, 64, 65, 119, 120, 127, 128, 129, 1000, 4099}) {
    std::string bytes(len, '\0');
    for (std::size_t i = 0; i < len; ++i) bytes[i] = static_cast<char>((i * 131 + 7) % 256);
    EXPECT_EQ(sha256_hex(bytes), coreutils_sha256(bytes)) << "length " << len;
  }
}

TEST(Sha256, IsLowerCaseHexOfLength64) {
  const std::string d = sha256_hex("chaosweep");
  ASSERT_EQ(d.size(), 64u);
  EXPECT_EQ(d.find_first_not_of("0123456789abcdef"), std::string::npos);
}

}  // namespace

namespace {

// published: FIPS 180-2, Appendix B.3 again, given in pieces of awkward sizes (1, 63, 64, 65
// and 4099 bytes in turn) through the incremental interface used to seal archives.
TEST(Sha256, PiecesGiveTheSameDigest) {
  const std::string message(1000000, 'a');
  chaosweep::Sha256 hash;
  const std::size_t sizes[] = {1, 63, 64, 65, 4099};
  std::size_t at = 0;
  for (int i = 0; at < message.size(); ++i) {
    const std::size_t n = std::min(sizes[i % 5], message.size() - at);
    hash.update(message.data() + at, n);
    at += n;
  }
  EXPECT_EQ(hash.hex(), "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
}

}  // namespace
