// A scheduled (time-dependent) model parameter: its value at model time t, and the case's
// parameters at t = 0. Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// Time t is model time counted from the start of the integration (t = 0 at the start of the
// spin-up). Integrators evaluate the value at each RK4 stage time t_n, t_n + dt/2, t_n + dt
// with t_n = n dt computed from the step index n, so the values do not depend on how a run
// is split into chunks or resumed.
#pragma once

#include <cstdint>

#include "integrators/rk4.hpp"
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

/// Start and end time of step n of a run: t0 = n dt, t1 = (n + 1) dt, both from the step
/// count (never from a running sum), so every integration of the same step has the same times.
struct StepTimes {
  double t0, t1;
};
StepTimes step_times(std::int64_t step, double dt);

/// The stage clock (integrators::Rk4Batch::StageClock) of a scheduled parameter: set_time(t)
/// sets the parameter of `model` to schedule(t) + offset. Every integration under a schedule
/// (the generic kernel's members and twins, the Lyapunov run) evaluates the parameter here.
/// The model must outlive the clock; the clock is the only writer of that parameter.
class ScheduledParameter final : public integrators::Rk4Batch::StageClock {
 public:
  /// Throws chaosweep::Error when the model cannot vary the parameter in time.
  ScheduledParameter(models::Model& model, const spec::Schedule& schedule, double offset);
  void set_time(double t) override;

 private:
  models::Model& model_;
  int slot_;
  ParameterSchedule schedule_;
};

/// The offset a case adds to the schedule: its swept value of the scheduled parameter, or 0.
double schedule_offset(const spec::Spec& spec, const plan::Case& c);

/// The case's complete parameters with a scheduled parameter at its t = 0 value (the value
/// the base spin-up to the attractor and every batch start from); unchanged without schedule.
models::ParameterValues parameters_at_start(const spec::Spec& spec, const plan::Case& c);

}  // namespace chaosweep::run
