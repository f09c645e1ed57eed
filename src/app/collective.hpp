// What the commands that run under MPI (run, merge) share: agreeing on the checks before any
// work, and what they report once the estimates are in.
#pragma once

#include <functional>
#include <string>

#include "parallel/communicator.hpp"
#include "parallel/reduce.hpp"
#include "plan/plan.hpp"
#include "spec/spec.hpp"

namespace chaosweep::app {

/// The time now, ISO 8601 in UTC.
std::string utc_now();

/// Runs `step` on every rank; if it throws an Error on any rank, every rank returns the same
/// exit status and the lowest failing rank prints its one-line message. For the checks that
/// precede any work, where no rank is left waiting in a collective and no abort is needed.
int agree(const parallel::Communicator& comm, const std::function<void()>& step);

/// Warns (rank 0) about cases whose estimates need care: non-chaotic cases, and twin pairs of
/// which too few separated within the window.
void warn_about_estimates(const spec::Spec& spec, const plan::Plan& plan,
                          const parallel::EnsembleResults& e);

/// A campaign in which some case kept no valid member has no estimate for it: the archive is
/// written, but the command fails (exit 1, one line naming the cases) so that a dependent job
/// does not go on as if every case had results. kExitComplete otherwise.
int report_empty_cases(const parallel::Communicator& comm, const spec::Spec& spec,
                       const plan::Plan& plan, const parallel::EnsembleResults& e);

}  // namespace chaosweep::app
