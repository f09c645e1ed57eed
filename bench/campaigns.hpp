// The campaigns the benchmark integrates, built in code (no YAML): forced Lorenz-63,
// Lorenz-84, Lorenz-96 (n 40) and the two-scale ring with time moments and sign regimes,
// optionally a histogram.
#pragma once

#include <string>

#include "spec/spec.hpp"

namespace chaosweep::bench {

/// The two-scale ring's registry name (its rows are in the main table only).
inline constexpr const char* kTwoScale = "lorenz96-two-scale";

/// A one-case campaign of `model` ("lorenz63", "lorenz84", "lorenz96" or kTwoScale) with
/// `members` members in batches of `width`, integrated for `steps` accumulated steps after
/// `spinup_steps` of spin-up.
/// Statistics: every observable's time moments and extremes (kTwoScale: the slow sites,
/// site_mean and energy), sign regimes of the first state variable, and, with
/// `histogram`, an 80-bin histogram of it. Throws chaosweep::UsageError for another model.
spec::Spec bench_campaign(const std::string& model, long members, int width, long spinup_steps,
                          long steps, bool histogram);

/// Floating-point operations per member-step of the production kernels on such a campaign
/// (an FMA counts 2), counted from the code (campaigns.cpp), for comparison with the core's
/// FMA throughput.
double flops_per_member_step(const spec::Spec& spec);

}  // namespace chaosweep::bench
