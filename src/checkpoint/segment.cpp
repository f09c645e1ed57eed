// Segment files of finished batches (see segment.hpp). POSIX calls, each checked.
#include "checkpoint/segment.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <string_view>

#include "checkpoint/record.hpp"
#include "core/error.hpp"
#include "core/sha256.hpp"

namespace chaosweep::checkpoint {
namespace {

constexpr std::string_view kMagic = "CWSEGREC";
constexpr std::size_t kDigestSize = 64;                       // SHA-256 as hex
constexpr std::size_t kChecked = kSegmentHeaderSize - kDigestSize;  // under the header checksum
constexpr std::size_t kSearchChunk = std::size_t{1} << 16;   // read at a time to resynchronise
// A scan reads the next header ahead (with the records after it) only past a payload shorter
// than this: the bytes of a few short records cost less than a system call each, but reading
// ahead across long payloads (archived member rows) would read the whole segment to find its
// headers.
constexpr std::uint64_t kReadAheadBelow = 4096;

[[noreturn]] void fail(const std::string& doing, const std::string& path, int error) {
  throw IoError(doing + " " + path + ": " + std::strerror(error));
}

template <class T>
void put(std::string& out, T value) {
  out.append(reinterpret_cast<const char*>(&value), sizeof value);
}

template <class T>
T get(const char* from) {
  T value;
  std::memcpy(&value, from, sizeof value);
  return value;
}

/// A spec's SHA-256 as the header's 64 bytes (a shorter text is padded with NULs).
std::string fixed_digest(const std::string& sha256) {
  std::string text = sha256.substr(0, kDigestSize);
  text.resize(kDigestSize, '\0');
  return text;
}

}  // namespace

/// A file open for reading at offsets; closed when destroyed.
class ReadFile {
 public:
  explicit ReadFile(const std::string& path)
      : path_(path), fd_(::open(path.c_str(), O_RDONLY | O_CLOEXEC)) {
    if (fd_ < 0) fail("cannot open", path, errno);
  }
  ~ReadFile() { ::close(fd_); }
  ReadFile(const ReadFile&) = delete;
  ReadFile& operator=(const ReadFile&) = delete;

  std::uint64_t size() const {
    struct stat st {};
    if (::fstat(fd_, &st) != 0) fail("cannot stat", path_, errno);
    return static_cast<std::uint64_t>(st.st_size);
  }
  /// Reads up to `n` bytes at `offset` into `out`; fewer only at the end of the file. Small
  /// reads are served from a window read ahead (records are read in file order, mostly), so
  /// that a scan of many records makes a system call per window, not per record; with `ahead`
  /// false, a read outside the window goes to the file alone and leaves the window as it is.
  std::size_t read_at(std::uint64_t offset, std::size_t n, char* out, bool ahead = true) const {
    const bool in_window =
        offset >= window_start_ && offset + n <= window_start_ + window_.size();
    if (n > kWindow / 4 || (!ahead && !in_window)) return pread_all(offset, n, out);
    if (!in_window) {
      window_.resize(kWindow);
      window_.resize(pread_all(offset, kWindow, window_.data()));
      window_start_ = offset;
    }
    const std::size_t have =
        std::min<std::size_t>(n, static_cast<std::size_t>(window_start_ + window_.size() - offset));
    std::memcpy(out, window_.data() + (offset - window_start_), have);
    return have;
  }

 private:
  static constexpr std::size_t kWindow = 1 << 20;

  std::size_t pread_all(std::uint64_t offset, std::size_t n, char* out) const {
    std::size_t done = 0;
    while (done < n) {
      const ssize_t got = ::pread(fd_, out + done, n - done, static_cast<off_t>(offset + done));
      if (got < 0 && errno == EINTR) continue;
      if (got < 0) fail("cannot read", path_, errno);
      if (got == 0) break;
      done += static_cast<std::size_t>(got);
    }
    return done;
  }

  std::string path_;
  int fd_;
  mutable std::vector<char> window_;
  mutable std::uint64_t window_start_ = 0;
};

namespace {

/// A header's fields, once its magic and checksum have been verified.
struct Header {
  std::uint32_t version = 0;
  std::int64_t batch = -1;
  std::uint64_t length = 0;
  std::string spec_sha256;
  std::string payload_sha256;
};

/// Parses the kSegmentHeaderSize bytes at `p`; false when the magic or checksum is wrong.
bool parse_header(const char* p, Header* h) {
  if (std::string_view(p, kMagic.size()) != kMagic) return false;
  if (sha256_hex(std::string(p, kChecked)) != std::string_view(p + kChecked, kDigestSize)) {
    return false;
  }
  h->version = get<std::uint32_t>(p + 8);
  h->batch = get<std::int64_t>(p + 16);
  h->length = get<std::uint64_t>(p + 24);
  h->spec_sha256.assign(p + 32, kDigestSize);
  h->payload_sha256.assign(p + 96, kDigestSize);
  return true;
}

/// True when the `n` bytes at `p` begin like a record (as much of the magic as they hold).
bool starts_like_record(const char* p, std::size_t n) {
  const std::size_t k = std::min(n, kMagic.size());
  return std::string_view(p, k) == kMagic.substr(0, k);
}

/// The first offset at or after `from` where a record may start: a magic followed by a sound
/// header, or the beginning of a record cut short by the end of the file. `size` if none.
std::uint64_t next_record(const ReadFile& file, std::uint64_t from, std::uint64_t size) {
  std::string chunk(kSearchChunk, '\0');
  char header[kSegmentHeaderSize];
  Header h;
  for (std::uint64_t pos = from; pos < size;) {
    const auto want = static_cast<std::size_t>(std::min<std::uint64_t>(kSearchChunk, size - pos));
    const std::size_t n = file.read_at(pos, want, chunk.data());
    const std::string_view view(chunk.data(), n);
    const bool last = pos + n >= size;
    // A whole magic anywhere in the chunk; at the file's end also the start of one.
    for (std::size_t i = 0; i < n; ++i) {
      if (view[i] != kMagic[0]) continue;
      const std::size_t rest = n - i;
      if (rest < kMagic.size()) {
        if (last && starts_like_record(view.data() + i, rest)) return pos + i;
        if (!last) break;  // the next chunk starts here
        continue;
      }
      if (view.substr(i, kMagic.size()) != kMagic) continue;
      const std::uint64_t at = pos + i;
      if (size - at < kSegmentHeaderSize) return at;  // cut short within its header
      file.read_at(at, kSegmentHeaderSize, header);
      if (parse_header(header, &h)) return at;
    }
    if (last) break;
    pos += n - (kMagic.size() - 1);  // a magic across the chunk boundary is found next time
  }
  return size;
}

}  // namespace

SegmentScan scan_segment(const std::string& path, const std::string& spec_sha256) {
  const ReadFile file(path);
  const std::uint64_t size = file.size();
  const std::string spec = fixed_digest(spec_sha256);
  SegmentScan scan;
  std::int64_t other_spec = 0, other_version = 0;
  char header[kSegmentHeaderSize];
  std::uint64_t pos = 0;
  bool ahead = true;  // read the next header with the records after it (kReadAheadBelow)
  while (pos < size) {
    const std::uint64_t left = size - pos;
    if (left < kSegmentHeaderSize) {
      file.read_at(pos, static_cast<std::size_t>(left), header);
      if (starts_like_record(header, static_cast<std::size_t>(left))) {
        scan.cut_short = true;
      } else {
        scan.problems.push_back(path + ": damaged checkpoint (" + std::to_string(left) +
                                " bytes at its end, from byte " + std::to_string(pos) +
                                ", are no record)");
      }
      break;
    }
    file.read_at(pos, kSegmentHeaderSize, header, ahead);
    Header h;
    if (!parse_header(header, &h)) {
      const std::uint64_t next = next_record(file, pos + 1, size);
      scan.problems.push_back(path + ": damaged checkpoint (record header at byte " +
                              std::to_string(pos) + "); " +
                              (next < size ? "skipped " + std::to_string(next - pos) +
                                                 " bytes to the next record"
                                           : "no record after it"));
      pos = next;
      continue;
    }
    if (h.length > left - kSegmentHeaderSize) {  // the payload runs past the end of the file
      scan.cut_short = true;
      break;
    }
    if (h.version != kSegmentVersion) {
      ++other_version;
    } else if (h.spec_sha256 != spec) {
      ++other_spec;
    } else {
      scan.entries.push_back({h.batch, pos + kSegmentHeaderSize, h.length, h.payload_sha256});
    }
    pos += kSegmentHeaderSize + h.length;
    scan.sound_end = pos;
    ahead = h.length < kReadAheadBelow;
  }
  if (other_spec > 0) {
    scan.problems.push_back(path + ": " + std::to_string(other_spec) +
                            " records written for a different spec skipped");
  }
  if (other_version > 0) {
    scan.problems.push_back(path + ": " + std::to_string(other_version) +
                            " records of another format version skipped");
  }
  return scan;
}

SegmentReader::SegmentReader(const std::string& path)
    : path_(path), file_(std::make_unique<ReadFile>(path)) {}

SegmentReader::~SegmentReader() = default;

std::string SegmentReader::payload(const SegmentEntry& entry) const {
  const std::string where = path_ + ": damaged checkpoint (record of batch " +
                            std::to_string(entry.batch) + " at byte " +
                            std::to_string(entry.payload_offset - kSegmentHeaderSize) + ": ";
  std::string payload(static_cast<std::size_t>(entry.payload_length), '\0');
  if (file_->read_at(entry.payload_offset, payload.size(), payload.data()) != payload.size()) {
    throw CorruptCheckpoint(where + "truncated)");
  }
  if (sha256_hex(payload) != entry.payload_sha256) {
    throw CorruptCheckpoint(where + "checksum mismatch)");
  }
  return payload;
}

std::string read_payload(const std::string& path, const SegmentEntry& entry) {
  return SegmentReader(path).payload(entry);
}

void seal_segment_record(std::string* record, std::int64_t batch,
                         const std::string& spec_sha256) {
  if (record->size() < kSegmentHeaderSize) {
    throw Error("a segment record without room for its header");
  }
  const std::uint64_t length = record->size() - kSegmentHeaderSize;
  Sha256 payload_sha;
  payload_sha.update(record->data() + kSegmentHeaderSize, length);
  std::string header;
  header.reserve(kSegmentHeaderSize);
  header.append(kMagic);
  put<std::uint32_t>(header, kSegmentVersion);
  put<std::uint32_t>(header, 0);
  put<std::int64_t>(header, batch);
  put<std::uint64_t>(header, length);
  header += fixed_digest(spec_sha256);
  header += payload_sha.hex();
  header += sha256_hex(header);
  record->replace(0, kSegmentHeaderSize, header);
}

SegmentWriter::SegmentWriter(std::string path, const std::string& spec_sha256, bool* created)
    : path_(std::move(path)) {
  fd_ = ::open(path_.c_str(), O_WRONLY | O_APPEND | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
  *created = fd_ >= 0;
  if (*created) return;
  if (errno != EEXIST) fail("cannot create", path_, errno);
  const SegmentScan scan = scan_segment(path_, spec_sha256);
  fd_ = ::open(path_.c_str(), O_WRONLY | O_APPEND | O_CLOEXEC);
  if (fd_ < 0) fail("cannot open", path_, errno);
  end_ = scan.sound_end;
  struct stat st {};
  const bool sound = ::fstat(fd_, &st) == 0 && static_cast<std::uint64_t>(st.st_size) == end_;
  if (!sound && ::ftruncate(fd_, static_cast<off_t>(end_)) != 0) {
    const int error = errno;
    ::close(fd_);
    fd_ = -1;
    fail("cannot cut back to its last sound record", path_, error);
  }
}

SegmentWriter::~SegmentWriter() {
  if (fd_ >= 0) ::close(fd_);
}

void SegmentWriter::append(const std::string& record) {
  std::size_t done = 0;
  while (done < record.size()) {
    const ssize_t n = ::write(fd_, record.data() + done, record.size() - done);
    if (n < 0 && errno == EINTR) continue;  // a signal arrived; the write goes on
    if (n < 0) {
      const int error = errno;
      const bool cut_back = ::ftruncate(fd_, static_cast<off_t>(end_)) == 0;
      throw IoError("cannot write " + path_ + ": " + std::strerror(error) +
                    (cut_back ? "" : " (the part written stays; a resume ignores it)"));
    }
    done += static_cast<std::size_t>(n);
  }
#if defined(__linux__)
  // Start writing the records to disk now, without waiting: otherwise they stay dirty in the
  // page cache until the kernel's threshold, and a campaign that keeps member rows (2 GB of
  // records for 8e6 members) has its archive writes wait for them (4e6 x 2 members: archive
  // written in 3.7-3.9 s instead of 4.3-5.2 s). A failure here shows again at the next fsync.
  (void)::sync_file_range(fd_, static_cast<off_t>(end_), static_cast<off_t>(record.size()),
                          SYNC_FILE_RANGE_WRITE);
#endif
  end_ += record.size();
}

void SegmentWriter::sync() {
  if (::fsync(fd_) != 0) fail("cannot sync", path_, errno);
}

}  // namespace chaosweep::checkpoint
