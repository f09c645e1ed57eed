// Segments: append-only files of finished batches, one per writing rank, each a sequence of
// self-describing records. Pure: no MPI, no HDF5; POSIX file calls, each checked.
//
// A record (integers little-endian as on the writing machine, like record.hpp):
//   offset  size
//        0     8  magic "CWSEGREC"
//        8     4  u32 format version (kSegmentVersion)
//       12     4  u32 zero (reserved)
//       16     8  i64 batch index
//       24     8  u64 payload length L
//       32    64  the spec's SHA-256, hex
//       96    64  SHA-256 of the payload, hex
//      160    64  SHA-256 of bytes [0, 160) (the header checksum), hex
//      224     L  payload: the finished batch's record, record.hpp's encode_body()
//
// A reader walks the headers and seeks past each payload. A header that fails its checks
// (magic, checksum) is damage: the reader searches forward for the next magic that starts a
// sound header and goes on from there. A last record that ends beyond the end of the file was
// cut short (its writer died during the append) and is ignored. A payload is checked against
// its checksum only when it is read.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

namespace chaosweep::checkpoint {

// 2: records carry the batch summary; 3: the summary estimates the regimes' mean residence
inline constexpr std::uint32_t kSegmentVersion = 3;
inline constexpr std::size_t kSegmentHeaderSize = 224;

/// A record whose header is sound: what it holds and where its payload lies.
struct SegmentEntry {
  std::int64_t batch = -1;
  std::uint64_t payload_offset = 0;
  std::uint64_t payload_length = 0;
  std::string payload_sha256;
};

/// What scan_segment() found in one segment.
struct SegmentScan {
  std::vector<SegmentEntry> entries;  // the given spec's records with a sound header, in file order
  std::vector<std::string> problems;  // one line per damaged region or group of unusable records
  std::uint64_t sound_end = 0;        // end of the last record with sound header and whole payload
  bool cut_short = false;             // the file ends inside a record (a write cut short)
};

/// Reads the record headers of `path` (not the payloads). Records of another spec or format
/// version count as sound (sound_end passes them) but are not entries; they and damaged
/// headers are described in `problems`. Throws IoError if the file cannot be read.
SegmentScan scan_segment(const std::string& path, const std::string& spec_sha256);

/// The payload of `entry` in `path`, checked against its checksum; throws CorruptCheckpoint
/// when it does not match or the file is too short, IoError when it cannot be read.
std::string read_payload(const std::string& path, const SegmentEntry& entry);

class ReadFile;
/// read_payload() for many records of one segment: the file stays open, and records read in
/// file order come from a window read ahead.
class SegmentReader {
 public:
  explicit SegmentReader(const std::string& path);  // IoError when it cannot be opened
  ~SegmentReader();
  const std::string& path() const { return path_; }
  std::string payload(const SegmentEntry& entry) const;

 private:
  std::string path_;
  std::unique_ptr<ReadFile> file_;
};

/// Completes a record in `record`, which holds kSegmentHeaderSize bytes of room followed by
/// the payload: writes the header into that room (so that a writer reuses one buffer).
void seal_segment_record(std::string* record, std::int64_t batch,
                         const std::string& spec_sha256);

/// The segment this process appends to. Opening an existing segment first cuts it back to the
/// end of its last sound record, so that a record cut short by an earlier death is not
/// followed by new ones. Not copyable; closes the file when destroyed.
class SegmentWriter {
 public:
  /// Opens `path`, creating it if absent (`created` says whether it did).
  SegmentWriter(std::string path, const std::string& spec_sha256, bool* created);
  ~SegmentWriter();
  SegmentWriter(const SegmentWriter&) = delete;
  SegmentWriter& operator=(const SegmentWriter&) = delete;

  /// Appends `record` (seal_segment_record()) with write(): when it returns, the record survives
  /// the death of the process. On failure the segment is cut back to where it ended and
  /// IoError is thrown.
  void append(const std::string& record);
  /// fsync: the records appended so far survive a crash of the machine.
  void sync();
  const std::string& path() const { return path_; }

 private:
  std::string path_;
  int fd_ = -1;
  std::uint64_t end_ = 0;  // bytes in the file: the end of the last record appended
};

}  // namespace chaosweep::checkpoint
