#include "plan/member_output.hpp"

#include <algorithm>
#include <cstdio>
#include <string>

#include "core/bytes_text.hpp"
#include "core/error.hpp"
#include "plan/plan.hpp"

namespace chaosweep::plan {
namespace {

double element_bytes(results::ElementType type) {
  switch (type) {
    case results::ElementType::float64:
    case results::ElementType::int64: return 8.0;
    case results::ElementType::uint8: return 1.0;
    case results::ElementType::text: return 0.0;  // no text is stored per member
  }
  return 0.0;
}


}  // namespace

std::int64_t archived_members(const spec::Output& output, std::int64_t members) {
  switch (output.members) {
    case spec::MemberOutput::none: return 0;
    case spec::MemberOutput::sample: return std::min(output.member_sample, members);
    case spec::MemberOutput::unset:
    case spec::MemberOutput::all: return members;
  }
  return members;
}

double member_bytes(const Plan& plan, std::int64_t members) {
  double bytes = 0.0;
  for (const results::Quantity& q : results::quantities()) {
    if (q.scope != results::Scope::member || !q.archived() || !q.present(plan.outputs)) continue;
    double values = static_cast<double>(plan.cases.size()) * static_cast<double>(members);
    for (std::size_t d = 2; d < q.dims.size(); ++d) {
      values *= static_cast<double>(plan.extent(q.dims[d]));
    }
    bytes += values * element_bytes(q.type);
  }
  return bytes;
}

void check_member_output(const spec::Spec& spec, const Plan& plan) {
  const std::int64_t total = plan.member_count();
  if (spec.output.members != spec::MemberOutput::unset || total <= spec::kMaxMembersUnset) {
    return;
  }
  const spec::Location at = spec.ensemble.members_where;
  throw SpecError(spec.source_path + ":" + std::to_string(at.line) + ":" +
                  std::to_string(at.column) + ": ensemble.members: " + std::to_string(total) +
                  " members in all (more than " + std::to_string(spec::kMaxMembersUnset) +
                  ") and output.members is not set: keeping every member (`all`) would put " +
                  "about " + bytes_text(member_bytes(plan, plan.members)) +
                  " of per-member results in the archive; set output.members to all, none or "
                  "{sample: N}");
}

}  // namespace chaosweep::plan
