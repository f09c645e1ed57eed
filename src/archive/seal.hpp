// The archive's seal: a short text header in the first 512 bytes of the file (an HDF5 user
// block, which HDF5 and every HDF5 reader skip) naming the format version, the file's size and
// the SHA-256 of everything after the header. Written once the archive is complete, checked
// before chaosweep hands a file to HDF5: a damaged, truncated or edited archive is refused
// with one line instead of reaching HDF5's parser, which does not survive every damage.
//
// The header, in ASCII, padded with NUL bytes to 512:
//   chaosweep archive
//   format <version>
//   bytes <size of the whole file>
//   sha256 <digest of bytes 512 .. end>
#pragma once

#include <cstdint>
#include <string>

namespace chaosweep::archive {

/// Size of the header; the archive is created with an HDF5 user block of this size.
inline constexpr std::uint64_t kSealBytes = 512;

/// Writes the header into the first kSealBytes of the complete file at `path` and syncs the
/// file to disk. Throws chaosweep::IoError.
void seal_file(const std::string& path);
/// The two steps of seal_file: the header for the file as it is (reads it whole), and
/// writing a header into the file, then syncing it.
std::string seal_header(const std::string& path);
void write_seal(const std::string& path, const std::string& header);

/// Checks the header of the file at `path` against its content. Throws chaosweep::UsageError
/// with a one-line message starting with `path` when it is not a sealed chaosweep archive, is of
/// a newer format than this program reads, or its size or digest disagree with the header;
/// `remedy` ends the message of a damaged file (by default: how `summary` reads it anyway).
void verify_seal(const std::string& path, const std::string& remedy = "");

/// `bytes` (a whole file) with its header rewritten to match its content, or unchanged when
/// shorter than the header. For tests and fuzzing of what lies behind the seal.
std::string resealed(std::string bytes);

}  // namespace chaosweep::archive
