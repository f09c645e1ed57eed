// What each fuzz harness asks of one input, shared by the libFuzzer programs (fuzz/) and the
// regression replay (tests/fuzz/), which runs in every ordinary build without clang.
//
// Each check feeds the input to one reader of untrusted bytes and says whether the reader kept
// to its contract: it returned, or it refused the input with the documented one-line error.
// Crashes, sanitizer reports, hangs and runaway allocations are caught by the process running
// the check (libFuzzer, or the replay test under ctest's timeout), not here.
#pragma once

#include <string>

namespace chaosweep::fuzz {

struct Outcome {
  bool clean = true;  // the reader kept to its contract
  std::string what;   // clean: "accepted" or "refused: MESSAGE"; else what went wrong
};

/// The spec loader: spec::parse_spec(bytes, "fuzz.yaml") returns, or throws SpecError whose
/// message is one line starting "fuzz.yaml:LINE:COL: ".
Outcome check_spec(const std::string& bytes);

/// The archive reader: `bytes` are written to the file `scratch_path`, then
/// archive::read_summary(scratch_path) returns, or throws UsageError with a one-line message
/// naming the file; nothing may be printed to C's stderr stream meanwhile (where an HDF5
/// diagnostic dump would go). The file is removed afterwards. When `bytes` start with an
/// archive's seal (archive/seal.hpp), the same is then checked on a copy whose seal is
/// rewritten to match (archive::resealed), so that mutations also reach HDF5 and the reader
/// behind the checksum.
Outcome check_archive(const std::string& bytes, const std::string& scratch_path);

/// The checkpoint decoder. The first byte chooses what is decoded: with its lowest bit clear,
/// the remaining bytes as they are; with it set, the remaining bytes followed by their correct
/// SHA-256, so that mutations reach the parser behind the checksum. checkpoint::decode(..,
/// "fuzz") returns, or throws CorruptCheckpoint with a one-line message; a record it returns
/// encodes to bytes that decode to the same record.
Outcome check_checkpoint(const std::string& bytes);

}  // namespace chaosweep::fuzz
