// The checkpoint file format: a record of named arrays with a header and a SHA-256 trailer.
// Pure: no MPI, no HDF5; file system access lives in files.hpp.
//
// Layout (all integers little-endian as on the writing machine; checkpoints are read back on
// the same cluster):
//   "CWCKPT01"                         8-byte magic and format version
//   u64 n, then n bytes                header text: "key=value" lines
//   u32 arrays, then per array:        u8 type (1 float64, 2 int64, 3 uint8),
//                                      u32 name length, name, u64 count, count elements
//   64 hex characters                  SHA-256 of everything before (left out by encode_body)
#pragma once

#include <cstdint>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include "core/error.hpp"

namespace chaosweep::checkpoint {

/// A checkpoint file that cannot be used: truncated, corrupted, or of another campaign.
class CorruptCheckpoint : public Error {
 public:
  explicit CorruptCheckpoint(const std::string& message) : Error(message, kExitFailure) {}
};

struct Record {
  std::map<std::string, std::string> header;  // e.g. kind, spec_sha256, batch
  std::vector<std::pair<std::string, std::vector<double>>> reals;
  std::vector<std::pair<std::string, std::vector<std::int64_t>>> integers;
  std::vector<std::pair<std::string, std::vector<std::uint8_t>>> bytes;

  const std::vector<double>& real(const std::string& name) const;
  const std::vector<std::int64_t>& integer(const std::string& name) const;
  const std::vector<std::uint8_t>& byte_array(const std::string& name) const;
  const std::string& field(const std::string& key) const;  // header value; throws if absent
};

/// Serialises a record with its checksum.
std::string encode(const Record& record);

/// Parses and verifies bytes written by encode(); `what` names the file in messages.
/// Throws CorruptCheckpoint for a wrong magic, a bad checksum or a truncated record.
Record decode(const std::string& bytes, const std::string& what);

/// The record without its SHA-256 trailer, for a container that checksums it itself (a
/// segment record, segment.hpp), appended to `out`; and its parser, which checks the
/// structure only.
void encode_body(const Record& record, std::string* out);
Record decode_body(const std::string& bytes, const std::string& what);

}  // namespace chaosweep::checkpoint
