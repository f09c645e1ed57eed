// A scheduled (time-dependent) model parameter: its value at model time t, and the case's
// parameters at t = 0. Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// Time t is model time counted from the start of the integration (t = 0 at the start of the
// spin-up). Integrators evaluate the value at each RK4 stage time t_n, t_n + dt/2, t_n + dt
// with t_n = n dt computed from the step index n, so the values do not depend on how a run
// is split into chunks or resumed.
#pragma once

#include "models/model.hpp"
#include "plan/plan.hpp"
#include "spec/spec.hpp"

namespace chaosweep::run {

/// The schedule's formula (spec::Schedule) plus a constant offset (the case's swept value of
/// the same parameter, or 0).
class ParameterSchedule {
 public:
  ParameterSchedule(const spec::Schedule& schedule, double offset);
  /// schedule(t) + offset; the same bits for the same t.
  double at(double t) const;

 private:
  spec::Schedule s_;
  double offset_;
};

/// The offset a case adds to the schedule: its swept value of the scheduled parameter, or 0.
double schedule_offset(const spec::Spec& spec, const plan::Case& c);

/// The case's complete parameters with a scheduled parameter at its t = 0 value (the value
/// the base spin-up to the attractor and every batch start from); unchanged without schedule.
models::ParameterValues parameters_at_start(const spec::Spec& spec, const plan::Case& c);

}  // namespace chaosweep::run
