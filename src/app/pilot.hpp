// `chaosweep check SPEC --pilot`: a short pilot on a few members of a few cases, run on this
// process with the campaign's own engine (run::CaseRunner over a shortened plan), that reports
// whether dt is fine enough, the decorrelation time of each observable's time mean, and the
// members x duration a target 95% half-width needs, with the core-hours of the full campaign.
#pragma once

#include <string>

#include "plan/plan.hpp"
#include "spec/spec.hpp"

namespace chaosweep::app {

struct PilotOptions {
  int members = 32;                     // per pilot case
  double duration = 0.0;                // accumulated time; 0: a tenth of integration.duration
  // Wanted 95% half-widths, "X" for every observable or "NAME=X,NAME=X" (observable units;
  // for a slope, observable units per unit of the swept parameter). Empty: none.
  std::string target_halfwidth;        // of each case's ensemble mean
  std::string target_slope_halfwidth;  // of each response slope
};

/// Throws UsageError for options the pilot cannot honour with this spec (before any work).
void check_pilot_options(const spec::Spec& spec, const plan::Plan& plan,
                         const PilotOptions& options);

/// Runs the pilot and prints its report to standard output (progress to standard error when it
/// takes more than a few seconds). `rate` is the calibrated member-steps per second of one core.
void run_pilot(const spec::Spec& spec, const plan::Plan& plan, const PilotOptions& options,
               double rate);

}  // namespace chaosweep::app
