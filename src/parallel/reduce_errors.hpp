// Internal to parallel/: the per-case quantities that make an ensemble time mean's error
// honest under autocorrelation (standard error of the ensemble mean, effective samples,
// decorrelation time), merged along the fixed merge tree like every other estimate (see
// reduce.hpp).
#pragma once

#include <vector>

#include "parallel/communicator.hpp"
#include "parallel/reduce.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"

namespace chaosweep::parallel {

/// Fills r.time_mean_stderr, r.effective_samples and r.decorrelation_time ([case][observable])
/// from the members' blocking estimates; needs r.time_mean_std and r.valid_members.
void reduce_time_mean_errors(const plan::Plan& plan, const MergedCases& merged, EnsembleResults& r);

}  // namespace chaosweep::parallel
