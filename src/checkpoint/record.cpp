// Checkpoint record encoding (see record.hpp).
#include "checkpoint/record.hpp"

#include <cstring>

#include "core/sha256.hpp"

namespace chaosweep::checkpoint {
namespace {

constexpr char kMagic[] = "CWCKPT01";
constexpr std::size_t kMagicSize = 8;
constexpr std::size_t kDigestSize = 64;
enum Type : std::uint8_t { kFloat64 = 1, kInt64 = 2, kUInt8 = 3 };

template <class T>
void put(std::string& out, T value) {
  out.append(reinterpret_cast<const char*>(&value), sizeof value);
}

template <class T>
void put_array(std::string& out, Type type, const std::string& name, const std::vector<T>& v) {
  put<std::uint8_t>(out, type);
  put<std::uint32_t>(out, static_cast<std::uint32_t>(name.size()));
  out += name;
  put<std::uint64_t>(out, v.size());
  out.append(reinterpret_cast<const char*>(v.data()), v.size() * sizeof(T));
}

/// Reads from a byte range, throwing CorruptCheckpoint on any overrun.
class Cursor {
 public:
  Cursor(const std::string& bytes, std::size_t end, const std::string& what)
      : bytes_(bytes), end_(end), what_(what) {}

  template <class T>
  T get() {
    T value;
    std::memcpy(&value, take(sizeof value), sizeof value);
    return value;
  }
  std::string text(std::size_t n) { return std::string(take(n), n); }
  template <class T>
  std::vector<T> array() {
    const std::uint64_t n = get<std::uint64_t>();
    if (n > (end_ - pos_) / sizeof(T)) fail("array longer than the file");
    std::vector<T> v(static_cast<std::size_t>(n));
    const char* from = take(v.size() * sizeof(T));
    // An empty vector's data() may be null, which memcpy does not accept even for 0 bytes.
    if (!v.empty()) std::memcpy(v.data(), from, v.size() * sizeof(T));
    return v;
  }
  bool at_end() const { return pos_ == end_; }
  [[noreturn]] void fail(const std::string& why) const {
    throw CorruptCheckpoint(what_ + ": damaged checkpoint (" + why + ")");
  }

 private:
  const char* take(std::size_t n) {
    if (n > end_ - pos_) fail("truncated");
    const char* p = bytes_.data() + pos_;
    pos_ += n;
    return p;
  }
  const std::string& bytes_;
  std::size_t pos_ = kMagicSize;
  std::size_t end_;
  const std::string& what_;
};

std::string header_text(const std::map<std::string, std::string>& header) {
  std::string text;
  for (const auto& [key, value] : header) text += key + "=" + value + "\n";
  return text;
}

std::map<std::string, std::string> parse_header(const std::string& text, const Cursor& cursor) {
  std::map<std::string, std::string> header;
  std::size_t start = 0;
  while (start < text.size()) {
    const std::size_t end = text.find('\n', start);
    const std::size_t eq = text.find('=', start);
    if (end == std::string::npos || eq == std::string::npos || eq > end) cursor.fail("header");
    header[text.substr(start, eq - start)] = text.substr(eq + 1, end - eq - 1);
    start = end + 1;
  }
  return header;
}

template <class T>
const std::vector<T>& find(const std::vector<std::pair<std::string, std::vector<T>>>& arrays,
                           const std::string& name) {
  for (const auto& [key, values] : arrays) {
    if (key == name) return values;
  }
  throw CorruptCheckpoint("checkpoint record lacks the array `" + name + "`");
}

/// Parses bytes [0, end) of a record whose magic (and, for decode(), checksum) was checked.
Record parse(const std::string& bytes, std::size_t end, const std::string& what) {
  Cursor in(bytes, end, what);
  Record record;
  record.header = parse_header(in.text(static_cast<std::size_t>(in.get<std::uint64_t>())), in);
  const std::uint32_t arrays = in.get<std::uint32_t>();
  for (std::uint32_t i = 0; i < arrays; ++i) {
    const auto type = in.get<std::uint8_t>();
    const std::string name = in.text(in.get<std::uint32_t>());
    if (type == kFloat64) {
      record.reals.emplace_back(name, in.array<double>());
    } else if (type == kInt64) {
      record.integers.emplace_back(name, in.array<std::int64_t>());
    } else if (type == kUInt8) {
      record.bytes.emplace_back(name, in.array<std::uint8_t>());
    } else {
      in.fail("unknown array type");
    }
  }
  if (!in.at_end()) in.fail("trailing bytes");
  return record;
}

}  // namespace

const std::vector<double>& Record::real(const std::string& name) const { return find(reals, name); }
const std::vector<std::int64_t>& Record::integer(const std::string& name) const {
  return find(integers, name);
}
const std::vector<std::uint8_t>& Record::byte_array(const std::string& name) const {
  return find(bytes, name);
}
const std::string& Record::field(const std::string& key) const {
  const auto it = header.find(key);
  if (it == header.end()) throw CorruptCheckpoint("checkpoint record lacks `" + key + "`");
  return it->second;
}

void encode_body(const Record& record, std::string* out) {
  out->append(kMagic, kMagicSize);
  const std::string header = header_text(record.header);
  put<std::uint64_t>(*out, header.size());
  *out += header;
  put<std::uint32_t>(*out, static_cast<std::uint32_t>(record.reals.size() +
                                                      record.integers.size() +
                                                      record.bytes.size()));
  for (const auto& [name, v] : record.reals) put_array(*out, kFloat64, name, v);
  for (const auto& [name, v] : record.integers) put_array(*out, kInt64, name, v);
  for (const auto& [name, v] : record.bytes) put_array(*out, kUInt8, name, v);
}

std::string encode(const Record& record) {
  std::string out;
  encode_body(record, &out);
  out += sha256_hex(out);
  return out;
}

Record decode(const std::string& bytes, const std::string& what) {
  if (bytes.size() < kMagicSize + kDigestSize || bytes.compare(0, kMagicSize, kMagic) != 0) {
    throw CorruptCheckpoint(what + ": damaged checkpoint (truncated, or not a checkpoint file of this version)");
  }
  const std::size_t body = bytes.size() - kDigestSize;
  if (sha256_hex(bytes.substr(0, body)) != bytes.substr(body)) {
    throw CorruptCheckpoint(what + ": damaged checkpoint (checksum mismatch)");
  }
  return parse(bytes, body, what);
}

Record decode_body(const std::string& bytes, const std::string& what) {
  if (bytes.size() < kMagicSize || bytes.compare(0, kMagicSize, kMagic) != 0) {
    throw CorruptCheckpoint(what +
                            ": damaged checkpoint (not a checkpoint record of this version)");
  }
  return parse(bytes, bytes.size(), what);
}

}  // namespace chaosweep::checkpoint
