// Internal to archive/: the root attributes that say what made a file, shared by the archive
// and the part archives of a campaign run in parts.
#pragma once

#include "archive/writer.hpp"
#include "h5/h5.hpp"
#include "spec/spec.hpp"

namespace chaosweep::archive {

/// campaign, model, tool_version, format_version, spec_yaml, spec_sha256, created_utc, ranks
/// and status on `root` (collective on a parallel file).
void write_identity(h5::Group& root, const spec::Spec& spec, const RunInfo& info);

}  // namespace chaosweep::archive
