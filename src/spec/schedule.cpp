// The `schedule` section (a time-dependent parameter) and statistics.snapshots.
#include <algorithm>
#include <cmath>
#include <memory>
#include <stdexcept>
#include <utility>

#include "spec/sections.hpp"
#include "spec/suggest.hpp"

namespace chaosweep::spec {
namespace {

/// Most snapshot times per case (each costs one value per member, observable and batch in the
/// batch state; an absurd-size guard).
constexpr double kMaxSnapshots = 100000.0;

const models::ParameterInfo* find_parameter(const models::ModelInfo& info,
                                            const std::string& name) {
  for (const auto& p : info.parameters) {
    if (p.name == name) return &p;
  }
  return nullptr;
}

/// Names of the parameters a schedule may vary: scalar and non-structural.
std::vector<std::string> schedulable_names(const models::ModelInfo& info) {
  std::vector<std::string> names;
  for (const auto& p : info.parameters) {
    if (!p.structural && p.default_value.size() == 1) names.push_back(p.name);
  }
  return names;
}

/// The kind's numbers, each checked as it is read.
void read_kind(const Map& map, Schedule& out) {
  switch (out.kind) {
    case ScheduleKind::constant:
      out.value = map.required("value").number();
      break;
    case ScheduleKind::ramp: {
      out.from = map.required("from").number();
      out.to = map.required("to").number();
      out.start = map.required("start").number();
      const Field end = map.required("end");
      out.end = end.number();
      if (!(out.end > out.start)) {
        end.fail("must be after start (" + format_number(out.start) + "), got " +
                 format_number(out.end));
      }
      if (!std::isfinite(out.end - out.start)) end.fail("end - start overflows");
      break;
    }
    case ScheduleKind::step:
      out.before = map.required("before").number();
      out.after = map.required("after").number();
      out.at = map.required("at").number();
      break;
    case ScheduleKind::periodic:
      out.mean = map.required("mean").number();
      out.amplitude = map.required("amplitude").number();
      out.period = map.required("period").number_above(0.0);
      out.phase = map.has("phase") ? map.get("phase").number() : 0.0;
      break;
    case ScheduleKind::none:
      break;
  }
}

/// Lowest and highest value the schedule takes (before any sweep offset).
std::pair<double, double> schedule_range(const Schedule& s) {
  switch (s.kind) {
    case ScheduleKind::constant: return {s.value, s.value};
    case ScheduleKind::ramp: return std::minmax(s.from, s.to);
    case ScheduleKind::step: return std::minmax(s.before, s.after);
    case ScheduleKind::periodic:
      return {s.mean - std::abs(s.amplitude), s.mean + std::abs(s.amplitude)};
    case ScheduleKind::none: break;
  }
  return {0.0, 0.0};
}

/// The keys of each kind (the first two are common to all); every kind's keys for a kind
/// that is not known (the kind itself is then reported).
std::vector<std::string> keys_of(const std::string& kind) {
  const bool any = kind != "constant" && kind != "ramp" && kind != "step" && kind != "periodic";
  std::vector<std::string> keys = {"parameter", "kind"};
  if (any || kind == "constant") keys.push_back("value");
  if (any || kind == "ramp") keys.insert(keys.end(), {"from", "to", "start", "end"});
  if (any || kind == "step") keys.insert(keys.end(), {"before", "after", "at"});
  if (any || kind == "periodic") keys.insert(keys.end(), {"mean", "amplitude", "period", "phase"});
  return keys;
}

/// The values the parameter takes over the run, with the sweep offsets added, against its
/// bounds, and the model built at both extremes (stable dt, factory checks).
void check_extremes(const Field& where, const models::ParameterInfo& p, ModelFacts& facts,
                    Spec& spec) {
  const Schedule& s = spec.schedule;
  auto [low, high] = schedule_range(s);
  if (s.offset_by_sweep) {
    for (const SweepAxis& axis : spec.sweep) {
      if (axis.parameter != s.parameter) continue;
      const auto [lo, hi] = std::minmax_element(axis.values.begin(), axis.values.end());
      low += *lo;
      high += *hi;
    }
  }
  const std::string offset = s.offset_by_sweep ? " (with the sweep's offsets)" : "";
  if (!std::isfinite(low) || !std::isfinite(high)) where.fail("the scheduled values overflow");
  if (low < p.min) {
    where.fail("the scheduled `" + p.name + "` reaches " + format_number(low) + offset +
               ", below its minimum " + format_number(p.min));
  }
  if (high > p.max) {
    where.fail("the scheduled `" + p.name + "` reaches " + format_number(high) + offset +
               ", above its maximum " + format_number(p.max));
  }
  models::ParameterValues params = spec.parameters;
  for (double v : {low, high}) {
    params[p.name] = {v};
    const std::string at = " with the scheduled " + p.name + " = " + format_number(v);
    std::unique_ptr<models::Model> model;
    try {
      model = facts.info->make(params);
    } catch (const std::invalid_argument& e) {
      where.fail(facts.info->name + " cannot be built" + at + ": " + e.what());
    }
    if (model->parameter_slot(p.name) < 0) {
      where.fail(facts.info->name + " cannot vary `" + p.name + "` in time");
    }
    if (model->max_stable_dt() < facts.max_dt) {
      facts.max_dt = model->max_stable_dt();
      facts.max_dt_where = at;
    }
  }
}

/// A schedule of the noise amplitude: archived (and offset by a sweep) under the sweep's
/// name of it; every value it takes, with the sweep's offsets, at least 0.
void read_noise_amplitude_schedule(const Field& schedule, const Map& map, Spec& spec) {
  Schedule& out = spec.schedule;
  out.parameter = kNoiseAmplitudeAxis;
  for (const SweepAxis& axis : spec.sweep) {
    if (axis.parameter == out.parameter) out.offset_by_sweep = true;
  }
  read_kind(map, out);
  auto [low, high] = schedule_range(out);
  for (const SweepAxis& axis : spec.sweep) {
    if (axis.parameter != out.parameter) continue;
    const auto [lo, hi] = std::minmax_element(axis.values.begin(), axis.values.end());
    low += *lo;
    high += *hi;
  }
  if (!std::isfinite(low) || !std::isfinite(high)) schedule.fail("the scheduled values overflow");
  if (low < 0) {
    schedule.fail("the scheduled noise amplitude reaches " + format_number(low) +
                  (out.offset_by_sweep ? " (with the sweep's offsets)" : "") +
                  ", below 0");
  }
}

}  // namespace

void read_schedule(const Field& schedule, const Field& model, ModelFacts& facts, Spec& spec) {
  if (!schedule.is_map()) {
    schedule.fail("expected a map {parameter, kind, ...}, got " + schedule.kind());
  }
  // The kind decides which keys are known, so it is read before the map is checked.
  const YAML::Node kind_node = schedule.node()["kind"];
  const std::string kind = kind_node && kind_node.IsScalar() ? kind_node.Scalar() : "";
  const Map map(schedule, {keys_of(kind), {}, "key", "in a schedule of kind " + kind});
  Schedule& out = spec.schedule;
  out.where = schedule.where();
  const std::string k =
      map.required("kind").choice({"constant", "ramp", "step", "periodic"}, "schedule kind");
  out.kind = k == "constant" ? ScheduleKind::constant
             : k == "ramp"   ? ScheduleKind::ramp
             : k == "step"   ? ScheduleKind::step
                             : ScheduleKind::periodic;
  const Field name = map.required("parameter");
  out.parameter = name.string();
  if (out.parameter == "noise.amplitude") {  // the stochastic forcing's (noise section)
    read_noise_amplitude_schedule(schedule, map, spec);
    return;
  }
  const models::ModelInfo& info = *facts.info;
  const models::ParameterInfo* p = find_parameter(info, out.parameter);
  if (!p) {
    name.fail("unknown parameter `" + printable(out.parameter) + "` of " + info.name +
              did_you_mean(out.parameter, schedulable_names(info), "it has"));
  }
  if (p->structural) {
    name.fail("`" + p->name + "` changes the state dimension of " + info.name +
              " (structural) and cannot follow a schedule");
  }
  if (p->default_value.size() != 1) {
    name.fail("`" + p->name + "` has " + std::to_string(p->default_value.size()) +
              " components; only a scalar parameter can follow a schedule");
  }
  const YAML::Node given = model.node()["parameters"];
  if (given && given.IsMap() && given[out.parameter]) {
    name.fail("`" + p->name + "` is also set in model.parameters; the schedule gives its "
              "value, so remove one of them");
  }
  for (const SweepAxis& axis : spec.sweep) {
    if (axis.parameter == out.parameter) out.offset_by_sweep = true;
  }
  read_kind(map, out);
  check_extremes(schedule, *p, facts, spec);
}

std::string scheduled_parameter(const Field& schedule) {
  if (!schedule.is_map()) return "";
  const YAML::Node name = schedule.node()["parameter"];
  return name && name.IsScalar() ? name.Scalar() : "";
}

void read_snapshots(const Field& snapshots, const Spec& spec, Snapshots& out) {
  const Map map(snapshots, {{"every"}, {}, "key", ""});
  const Field every = map.required("every");
  out.enabled = true;
  out.every = every.number_above(0.0);
  const double dt = spec.integration.dt;
  if (out.every < dt) {
    every.fail("must be at least integration.dt (" + format_number(dt) + "), got " +
               format_number(out.every));
  }
  if (out.every > spec.integration.duration) {
    every.fail("must be at most integration.duration (" +
               format_number(spec.integration.duration) + "), got " + format_number(out.every));
  }
  // A whole number of steps, up to the rounding of the decimal numbers (0.1 / 0.01 is not
  // exactly 10 in binary): relative 1e-9.
  const double steps = out.every / dt;
  if (std::abs(steps - std::round(steps)) > 1e-9 * steps) {
    every.fail("must be a whole number of steps of integration.dt (" + format_number(dt) +
               "), got " + format_number(out.every));
  }
  if (spec.integration.duration / out.every > kMaxSnapshots) {
    every.fail("gives more than " + format_number(kMaxSnapshots) +
               " snapshot times over integration.duration; take a longer interval");
  }
}

}  // namespace chaosweep::spec
