// Strict loading of a campaign spec: the only user of yaml-cpp.
//
// Unknown keys (with a did-you-mean for near misses), wrong types, out-of-range values,
// unknown models, parameters or observables all throw SpecError with a one-line message
// "FILE:LINE:COL: key.path: what is wrong". Nothing is created or touched on disk.
#pragma once

#include <string>

#include "spec/spec.hpp"

namespace chaosweep::spec {

/// Reads and validates the spec at `path`. Throws SpecError for an invalid spec, UsageError for
/// a file that cannot be read or is not text (an HDF5 archive given in its place, say).
Spec load_spec(const std::string& path);

/// Validates spec text; `source_name` is used in messages (normally the file path).
Spec parse_spec(const std::string& text, const std::string& source_name);

}  // namespace chaosweep::spec
