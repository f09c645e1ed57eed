// The campaigns the benchmark integrates, built in code (no YAML): forced Lorenz-63 and
// Lorenz-96 (n 40) with time moments and sign regimes, optionally a histogram.
#pragma once

#include <string>

#include "spec/spec.hpp"

namespace chaosweep::bench {

/// A one-case campaign of `model` ("lorenz63" or "lorenz96") with `members` members in batches
/// of `width`, integrated for `steps` accumulated steps after `spinup_steps` of spin-up.
/// Statistics: every observable's time moments and extremes (lorenz96: `observables` as given,
/// empty for every observable), sign regimes of the first state variable, and, with
/// `histogram`, an 80-bin histogram of it. Throws chaosweep::UsageError for another model.
spec::Spec bench_campaign(const std::string& model, long members, int width, long spinup_steps,
                          long steps, bool histogram);

/// Floating-point operations per member-step of the production kernels on such a campaign
/// (an FMA counts 2), counted from the code (campaigns.cpp), for comparison with the core's
/// FMA throughput.
double flops_per_member_step(const spec::Spec& spec);

}  // namespace chaosweep::bench
