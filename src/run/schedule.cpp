// Values of a scheduled parameter (see schedule.hpp and spec::Schedule for the formulas).
#include "run/schedule.hpp"

#include <cmath>

#include "core/error.hpp"

namespace chaosweep::run {

ParameterSchedule::ParameterSchedule(const spec::Schedule& schedule, double offset)
    : s_(schedule), offset_(offset) {}

double ParameterSchedule::at(double t) const {
  constexpr double kTwoPi = 6.283185307179586;  // 2 pi, correctly rounded
  double v = 0.0;
  switch (s_.kind) {
    case spec::ScheduleKind::constant:
      v = s_.value;
      break;
    case spec::ScheduleKind::ramp:
      // from before start, to after end, linear in between (start < end, checked by the spec)
      v = t <= s_.start ? s_.from
          : t >= s_.end ? s_.to
                        : s_.from + (s_.to - s_.from) * ((t - s_.start) / (s_.end - s_.start));
      break;
    case spec::ScheduleKind::step:
      v = t < s_.at ? s_.before : s_.after;
      break;
    case spec::ScheduleKind::periodic:
      // phase in radians
      v = s_.mean + s_.amplitude * std::sin(kTwoPi * t / s_.period + s_.phase);
      break;
    case spec::ScheduleKind::none:
      break;
  }
  return v + offset_;
}

StepTimes step_times(std::int64_t step, double dt) {
  return {static_cast<double>(step) * dt, static_cast<double>(step + 1) * dt};
}

ScheduledParameter::ScheduledParameter(models::Model& model, const spec::Schedule& schedule,
                                       double offset)
    : model_(model), slot_(model.parameter_slot(schedule.parameter)), schedule_(schedule, offset) {
  if (slot_ < 0) throw Error("the model cannot vary `" + schedule.parameter + "` in time");
}

void ScheduledParameter::set_time(double t) { model_.set_parameter(slot_, schedule_.at(t)); }

double schedule_offset(const spec::Spec& spec, const plan::Case& c) {
  if (!spec.schedule.offset_by_sweep) return 0.0;
  for (std::size_t a = 0; a < spec.sweep.size(); ++a) {
    if (spec.sweep[a].parameter == spec.schedule.parameter) return c.axis_values[a];
  }
  return 0.0;
}

models::ParameterValues parameters_at_start(const spec::Spec& spec, const plan::Case& c) {
  models::ParameterValues p = c.parameters;
  if (spec.schedule.kind == spec::ScheduleKind::none) return p;
  if (spec.schedule.parameter == spec::kNoiseAmplitudeAxis) return p;  // not a model parameter
  const ParameterSchedule schedule(spec.schedule, schedule_offset(spec, c));
  p[spec.schedule.parameter] = {schedule.at(0.0)};
  return p;
}

}  // namespace chaosweep::run
