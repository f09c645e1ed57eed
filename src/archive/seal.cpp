// The archive's seal (see seal.hpp).
#include "archive/seal.hpp"

#include <cerrno>
#include <cstring>
#include <fstream>
#include <sstream>
#include <vector>

#include "checkpoint/files.hpp"
#include "core/error.hpp"
#include "core/sha256.hpp"
#include "core/version.hpp"

namespace chaosweep::archive {
namespace {

constexpr const char* kMagic = "chaosweep archive";
constexpr char kHdf5Signature[] = "\x89HDF\r\n\x1a\n";

std::string header_text(int format, std::uint64_t size, const std::string& digest) {
  std::string text = std::string(kMagic) + "\nformat " + std::to_string(format) + "\nbytes " +
                     std::to_string(size) + "\nsha256 " + digest + "\n";
  text.resize(kSealBytes, '\0');
  return text;
}

[[noreturn]] void io_fail(const std::string& doing, const std::string& path) {
  throw IoError(doing + " " + path + ": " + std::strerror(errno));
}

/// SHA-256 of bytes [kSealBytes, end) of an open file, and the file's size.
std::string body_digest(std::istream& in, std::uint64_t& size) {
  Sha256 hash;
  std::vector<char> buffer(1 << 20);
  in.seekg(static_cast<std::streamoff>(kSealBytes));
  size = kSealBytes;
  while (in) {
    in.read(buffer.data(), static_cast<std::streamsize>(buffer.size()));
    const auto got = static_cast<std::size_t>(in.gcount());
    hash.update(buffer.data(), got);
    size += got;
  }
  return hash.hex();
}

struct Header {
  bool sealed = false;
  int format = 0;
  std::uint64_t bytes = 0;
  std::string digest;
};

/// Parses a header; sealed is false when the magic line or any field is missing.
Header parse(const std::string& text) {
  Header h;
  std::istringstream in(text.substr(0, text.find('\0')));
  std::string line, key;
  if (!std::getline(in, line) || line != kMagic) return h;
  if (!(in >> key >> h.format) || key != "format") return h;
  if (!(in >> key >> h.bytes) || key != "bytes") return h;
  if (!(in >> key >> h.digest) || key != "sha256" || h.digest.size() != 64) return h;
  h.sealed = true;
  return h;
}

}  // namespace

void seal_file(const std::string& path) { write_seal(path, seal_header(path)); }

std::string seal_header(const std::string& path) {
  std::uint64_t size = 0;
  std::string digest;
  {
    std::ifstream in(path, std::ios::binary);
    if (!in) io_fail("cannot read", path);
    digest = body_digest(in, size);
  }
  return header_text(kArchiveFormatVersion, size, digest);
}

void write_seal(const std::string& path, const std::string& header) {
  {
    std::fstream out(path, std::ios::binary | std::ios::in | std::ios::out);
    out.write(header.data(), static_cast<std::streamsize>(header.size()));
    out.flush();
    if (!out) io_fail("cannot write the header of", path);
  }
  checkpoint::sync_file(path);
}

void verify_seal(const std::string& path, const std::string& remedy) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw UsageError(path + ": cannot open: " + std::strerror(errno));
  std::string text(kSealBytes, '\0');
  in.read(text.data(), static_cast<std::streamsize>(text.size()));
  text.resize(static_cast<std::size_t>(in.gcount()));
  in.clear();
  const Header h = parse(text);
  if (!h.sealed) {
    if (text.compare(0, sizeof kHdf5Signature - 1, kHdf5Signature) == 0) {
      throw UsageError(path + ": not a chaosweep archive (an HDF5 file without chaosweep's "
                              "header; archives of format 1 had none and are no longer read)");
    }
    throw UsageError(path + ": not a chaosweep archive (no chaosweep header)");
  }
  if (h.format > kArchiveFormatVersion) {
    throw UsageError(path + ": archive format version " + std::to_string(h.format) +
                     " is newer than this chaosweep understands (" +
                     std::to_string(kArchiveFormatVersion) + "); use a newer chaosweep");
  }
  std::uint64_t size = 0;
  const std::string digest = body_digest(in, size);
  std::string mismatch;
  if (size != h.bytes) {
    mismatch = std::to_string(size) + " bytes on disk, " + std::to_string(h.bytes) +
               " when written";
  } else if (digest != h.digest) {
    mismatch = "checksum mismatch";
  }
  if (!mismatch.empty()) {
    throw UsageError(path + ": archive is damaged or was changed after chaosweep wrote it (" +
                     mismatch + "); " +
                     (remedy.empty() ? "`summary --no-verify` reads it anyway, at the risk of a "
                                       "crash inside HDF5 if it is damaged"
                                     : remedy));
  }
}

std::string resealed(std::string bytes) {
  if (bytes.size() < kSealBytes) return bytes;
  Sha256 hash;
  hash.update(bytes.data() + kSealBytes, bytes.size() - kSealBytes);
  const Header old = parse(bytes.substr(0, kSealBytes));
  const int format = old.sealed ? old.format : kArchiveFormatVersion;
  bytes.replace(0, kSealBytes, header_text(format, bytes.size(), hash.hex()));
  return bytes;
}

}  // namespace chaosweep::archive
