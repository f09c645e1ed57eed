// Timing of the production batch kernel and of the scalar reference on the same campaign.
// Rates are member-steps per second of the calling thread's CPU time, i.e. per core: time the
// scheduler gives to other processes on a busy machine is not counted.
#pragma once

#include <cstdint>
#include <vector>

#include "spec/spec.hpp"

namespace chaosweep::bench {

/// CPU seconds used by the calling thread so far.
double thread_cpu_seconds();

/// Median, minimum and maximum of repeated measurements.
struct Summary {
  double median = 0.0, min = 0.0, max = 0.0;
};
Summary summarise(std::vector<double> values);

/// Member-steps per CPU second of the production path over every batch of case 0 of `spec`:
/// CaseRunner::start, then BatchProgress::advance (timed), then finish, and with
/// statistics.lyapunov its second integration (run::add_lyapunov, timed). The per-batch set-up
/// and collection (initial states, results), which a real campaign spreads over 1e5 steps and
/// more, and the case's attractor spin-up are not timed.
double production_rate(const spec::Spec& spec);

/// Member-steps per CPU second of the scalar reference on the same campaign: each member on
/// its own with the reference RK4 (integrators/reference.hpp) and plain one-member statistics
/// (Welford moments per observable, regime and histogram counts per step), for `members`
/// members of case 0. Only the stepping and the statistics are timed.
double scalar_rate(const spec::Spec& spec, std::int64_t members);

}  // namespace chaosweep::bench
