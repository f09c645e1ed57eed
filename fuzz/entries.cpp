// The checks behind every fuzz harness (see entries.hpp).
#include "fuzz/entries.hpp"

#include <cxxabi.h>

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <exception>
#include <fstream>
#include <memory>
#include <typeinfo>
#include <utility>

#include "archive/reader.hpp"
#include "archive/seal.hpp"
#include "checkpoint/record.hpp"
#include "core/error.hpp"
#include "core/sha256.hpp"
#include "spec/load.hpp"

namespace chaosweep::fuzz {
namespace {

const char kSpecSource[] = "fuzz.yaml";
const char kCheckpointSource[] = "fuzz";
const std::string kSealMagic = "chaosweep archive\n";  // archive/seal.hpp

/// Readable name of the dynamic type of `e`.
std::string type_name(const std::exception& e) {
  const char* mangled = typeid(e).name();
  int status = 0;
  std::unique_ptr<char, void (*)(void*)> readable(
      abi::__cxa_demangle(mangled, nullptr, nullptr, &status), std::free);
  return status == 0 && readable ? readable.get() : mangled;
}

bool one_line(const std::string& message) {
  return !message.empty() && message.find_first_of("\n\r") == std::string::npos;
}

/// True when `text` starts with `prefix` followed by "LINE:COL: " (decimal digits).
bool has_position_prefix(const std::string& text, const std::string& prefix) {
  if (text.compare(0, prefix.size(), prefix) != 0) return false;
  std::size_t i = prefix.size();
  for (int part = 0; part < 2; ++part) {
    const std::size_t digits = i;
    while (i < text.size() && std::isdigit(static_cast<unsigned char>(text[i]))) ++i;
    if (i == digits || i >= text.size() || text[i] != ':') return false;
    ++i;
  }
  return i < text.size() && text[i] == ' ';
}

Outcome finding(std::string what) { return Outcome{false, std::move(what)}; }
Outcome accepted() { return Outcome{true, "accepted"}; }
Outcome refused(const std::string& message) { return Outcome{true, "refused: " + message}; }

/// An exception outside the contract: its type and message.
Outcome escaped(const std::exception& e) {
  return finding("an exception outside the contract escaped: " + type_name(e) + ": " + e.what());
}

/// Collects what is printed through C's `stderr` stream until finish(), where HDF5 prints its
/// diagnostics. Sanitizer reports and libFuzzer's own messages go to file descriptor 2 directly
/// (libFuzzer keeps its own copy of the stream), so a crash meanwhile is still reported
/// normally. The destructor puts the stream back if finish() was never reached.
class StderrCapture {
 public:
  StderrCapture() : saved_(stderr), memory_(open_memstream(&buffer_, &size_)) {
    if (memory_ != nullptr) stderr = memory_;
  }
  StderrCapture(const StderrCapture&) = delete;
  StderrCapture& operator=(const StderrCapture&) = delete;
  ~StderrCapture() {
    restore();
    std::free(buffer_);
  }

  /// Puts the stream back and returns what was printed meanwhile.
  std::string finish() {
    const bool captured = memory_ != nullptr;
    restore();
    return captured ? std::string(buffer_, size_) : "(stderr could not be captured)";
  }

 private:
  void restore() {
    if (memory_ == nullptr) return;
    stderr = saved_;
    std::fclose(memory_);  // flushes into buffer_ and size_
    memory_ = nullptr;
  }

  std::FILE* saved_;
  char* buffer_ = nullptr;
  std::size_t size_ = 0;
  std::FILE* memory_;
};

/// What read_summary does with one file.
Outcome read_archive(const std::string& path) {
  try {
    archive::read_summary(path);
  } catch (const UsageError& e) {
    const std::string message = e.what();
    if (!one_line(message)) return finding("UsageError message is not one line: " + message);
    if (message.compare(0, path.size(), path) != 0) {
      return finding("UsageError message does not start with the file name: " + message);
    }
    return refused(message);
  } catch (const std::exception& e) {
    return escaped(e);
  } catch (...) {
    return finding("a non-standard exception escaped");
  }
  return accepted();
}

/// What read_summary does with a file holding `bytes`.
Outcome read_archive_bytes(const std::string& bytes, const std::string& scratch_path) {
  {
    std::ofstream out(scratch_path, std::ios::binary | std::ios::trunc);
    out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
    if (!out) return finding("(the scratch file " + scratch_path + " could not be written)");
  }
  StderrCapture capture;
  const Outcome outcome = read_archive(scratch_path);
  const std::string printed = capture.finish();
  std::remove(scratch_path.c_str());
  if (!outcome.clean) return outcome;
  if (!printed.empty()) return finding("read_summary wrote to stderr: " + printed);
  return outcome;
}

/// decode(encode(record)) must give `record` back.
Outcome check_round_trip(const checkpoint::Record& record) {
  checkpoint::Record again;
  try {
    again = checkpoint::decode(checkpoint::encode(record), kCheckpointSource);
  } catch (const std::exception& e) {
    return finding("a decoded record does not decode after encoding it again: " +
                   std::string(e.what()));
  }
  const bool same = again.header == record.header && again.integers == record.integers &&
                    again.bytes == record.bytes && again.reals.size() == record.reals.size();
  if (!same) return finding("a decoded record changes when encoded and decoded again");
  for (std::size_t i = 0; i < record.reals.size(); ++i) {
    const auto& [name, values] = record.reals[i];
    const auto& [name_again, values_again] = again.reals[i];
    // Compared as bytes: NaN payloads must survive too.
    const bool equal = name == name_again && values.size() == values_again.size() &&
                       std::equal(values.begin(), values.end(), values_again.begin(),
                                  [](double a, double b) {
                                    return std::memcmp(&a, &b, sizeof a) == 0;
                                  });
    if (!equal) {
      return finding("the real array `" + name + "` changes when encoded and decoded again");
    }
  }
  return accepted();
}

}  // namespace

Outcome check_spec(const std::string& bytes) {
  try {
    spec::parse_spec(bytes, kSpecSource);
  } catch (const SpecError& e) {
    const std::string message = e.what();
    if (!one_line(message)) return finding("SpecError message is not one line: " + message);
    if (!has_position_prefix(message, std::string(kSpecSource) + ":")) {
      return finding("SpecError message does not start with \"fuzz.yaml:LINE:COL: \": " +
                     message);
    }
    return refused(message);
  } catch (const std::exception& e) {
    return escaped(e);
  } catch (...) {
    return finding("a non-standard exception escaped");
  }
  return accepted();
}

Outcome check_archive(const std::string& bytes, const std::string& scratch_path) {
  Outcome outcome = read_archive_bytes(bytes, scratch_path);
  if (!outcome.clean || bytes.compare(0, kSealMagic.size(), kSealMagic) != 0) return outcome;
  return read_archive_bytes(archive::resealed(bytes), scratch_path);
}

Outcome check_checkpoint(const std::string& bytes) {
  if (bytes.empty()) return refused("(empty input: no form byte)");
  std::string input = bytes.substr(1);
  if ((static_cast<unsigned char>(bytes[0]) & 1u) != 0) input += sha256_hex(input);
  checkpoint::Record record;
  try {
    record = checkpoint::decode(input, kCheckpointSource);
  } catch (const checkpoint::CorruptCheckpoint& e) {
    const std::string message = e.what();
    if (!one_line(message)) return finding("CorruptCheckpoint message is not one line: " + message);
    return refused(message);
  } catch (const std::exception& e) {
    return escaped(e);
  } catch (...) {
    return finding("a non-standard exception escaped");
  }
  return check_round_trip(record);
}

}  // namespace chaosweep::fuzz
