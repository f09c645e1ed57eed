// Which members' own results the archive holds (output.members), and what holding every
// member would cost. Pure: no MPI, no HDF5, no YAML.
#pragma once

#include <cstdint>

#include "spec/spec.hpp"

namespace chaosweep::plan {

struct Plan;

/// Members per case written to /member/*: all of them (`all`, or unset), none, or the first
/// N (`{sample: N}`).
std::int64_t archived_members(const spec::Output& output, std::int64_t members);

/// Bytes of the archive's /member/* datasets with `members` members per case: every per-member
/// quantity of the table the campaign has, cases x members x its trailing extents x element size.
double member_bytes(const Plan& plan, std::int64_t members);

/// Refuses (SpecError at ensemble.members, naming the archive size `all` would give) a campaign
/// of more than spec::kMaxMembersUnset members that leaves output.members unset.
void check_member_output(const spec::Spec& spec, const Plan& plan);

}  // namespace chaosweep::plan
