// The `model` and `sweep` sections: everything checked against the model registry.
#include <cmath>
#include <cstdio>
#include <limits>
#include <memory>
#include <optional>
#include <stdexcept>

#include "spec/sections.hpp"
#include "spec/suggest.hpp"

namespace chaosweep::spec {
namespace {

/// Largest number of values one range axis may generate (an absurd size guard).
constexpr std::int64_t kMaxRangeCount = 1000000;

std::vector<std::string> parameter_names(const models::ModelInfo& info) {
  std::vector<std::string> names;
  for (const auto& p : info.parameters) names.push_back(p.name);
  return names;
}

const models::ParameterInfo* find_parameter(const models::ModelInfo& info,
                                            const std::string& name) {
  for (const auto& p : info.parameters) {
    if (p.name == name) return &p;
  }
  return nullptr;
}

/// One component of a parameter value against its inclusive bounds and integrality.
void check_component(const Field& where, const models::ParameterInfo& p, double v) {
  if (v < p.min) {
    where.fail("`" + p.name + "` must be at least " + format_number(p.min) + ", got " +
               format_number(v));
  }
  if (v > p.max) {
    where.fail("`" + p.name + "` must be at most " + format_number(p.max) + ", got " +
               format_number(v));
  }
  if (p.integer && v != std::floor(v)) {
    where.fail("`" + p.name + "` must be an integer, got " + format_number(v));
  }
}

/// A parameter value: one number for a scalar parameter, a list of the declared length for a
/// vector one (e.g. forcing_direction, 3 components), a list of any length for a list-shaped
/// one, and a list of equal rows, as many as their length, for a matrix (stored row by row).
std::vector<double> read_parameter(const Field& f, const models::ParameterInfo& p) {
  const std::size_t n = p.default_value.size();
  if (p.shape == models::ParameterShape::matrix) {
    if (!f.is_list()) f.fail("`" + p.name + "` is a matrix; give its rows, e.g. [[-1, 0], [0, -2]]");
    const auto rows = f.items();
    std::vector<double> values;
    for (std::size_t r = 0; r < rows.size(); ++r) {
      if (!rows[r].is_list()) rows[r].fail("row " + std::to_string(r) + " of `" + p.name + "` is not a list of numbers");
      const auto items = rows[r].items();
      if (items.size() != rows.size()) {
        rows[r].fail("`" + p.name + "` must be square: row " + std::to_string(r) + " has " +
                     std::to_string(items.size()) + " numbers, and there are " +
                     std::to_string(rows.size()) + " rows");
      }
      for (const auto& item : items) {
        values.push_back(item.number());
        check_component(item, p, values.back());
      }
    }
    if (values.empty()) f.fail("`" + p.name + "` needs at least one row");
    return values;
  }
  if (!f.is_list()) {
    if (n != 1 || p.shape == models::ParameterShape::list) {
      f.fail("`" + p.name + "` has " +
             (p.shape == models::ParameterShape::list ? std::string("several")
                                                      : std::to_string(n)) +
             " components; give a list of numbers, got " + f.kind());
    }
    const double v = f.number();
    check_component(f, p, v);
    return {v};
  }
  if (n == 1 && p.shape == models::ParameterShape::fixed) {
    f.fail("`" + p.name + "` is a scalar parameter; give one number, not a list");
  }
  const auto items = f.items();
  if (p.shape == models::ParameterShape::fixed && items.size() != n) {
    f.fail("`" + p.name + "` needs " + std::to_string(n) + " components, got " +
           std::to_string(items.size()));
  }
  if (items.empty()) f.fail("`" + p.name + "` needs at least one component");
  std::vector<double> values;
  for (const auto& item : items) {
    values.push_back(item.number());
    check_component(item, p, values.back());
  }
  return values;
}

/// Builds the model; an inconsistent combination (std::invalid_argument) becomes a SpecError.
std::unique_ptr<models::Model> build(const models::ModelInfo& info,
                                     const models::ParameterValues& values, const Field& where,
                                     const std::string& context) {
  std::unique_ptr<models::Model> model;
  try {
    model = info.make(values);
  } catch (const std::invalid_argument& e) {
    where.fail(info.name + " cannot be built" + context + ": " + e.what());
  }
  if (!model) where.fail(info.name + " cannot be built" + context + ": its factory failed");
  return model;
}

/// Values of a range axis {start, stop, count}: inclusive of both ends, evenly spaced.
/// `where` gets the field each value is reported at: start and stop for the ends (the only
/// values that can leave an interval of bounds), the range itself for interior values.
void range_values(const Field& range, std::vector<double>& values, std::vector<Field>& where) {
  const Map map(range, {{"start", "stop", "count"}, {}, "key", ""});
  const Field start_field = map.required("start");
  const Field stop_field = map.required("stop");
  const double start = start_field.number();
  const double stop = stop_field.number();
  const Field count_field = map.required("count");
  const std::int64_t count = count_field.integer_in(1, kMaxRangeCount);
  if (count == 1 && start != stop) {
    count_field.fail("a range with count 1 needs start == stop; use count >= 2 to span " +
                     format_number(start) + " .. " + format_number(stop));
  }
  if (count >= 2 && start == stop) {
    count_field.fail("start and stop are equal, so a range of " + std::to_string(count) +
                     " values would repeat one value");
  }
  const double span = stop - start;
  if (!std::isfinite(span)) range.fail("stop - start overflows; the range is too wide");
  // v_i = start + (span * i) / (count - 1): the product then quotient rounds once each, so
  // e.g. 0..1 in 11 steps gives the correctly rounded 0.3 (i * step would give
  // 0.30000000000000004).
  values.assign(static_cast<std::size_t>(count), start);
  for (std::int64_t i = 1; i + 1 < count; ++i) {
    values[static_cast<std::size_t>(i)] =
        start + span * static_cast<double>(i) / static_cast<double>(count - 1);
  }
  values.back() = stop;
  where.assign(values.size(), range);
  where.front() = start_field;
  where.back() = stop_field;
}

/// Values of one axis, with the field each value came from (for error positions).
void axis_values(const Map& axis, std::vector<double>& values, std::vector<Field>& where) {
  if (axis.has("values") == axis.has("range")) {
    axis.field().fail(axis.has("values") ? "give either `values` or `range`, not both"
                                         : "missing `values` or `range`");
  }
  if (axis.has("values")) {
    const Field list = axis.get("values");
    for (const auto& item : list.items()) {
      values.push_back(item.number());
      where.push_back(item);
    }
    if (values.empty()) list.fail("a sweep axis needs at least one value");
  } else {
    range_values(axis.get("range"), values, where);
  }
}

/// Refuses a value that appears twice on one axis.
void check_distinct(const models::ParameterInfo& p, const std::vector<double>& values,
                    const std::vector<Field>& where) {
  for (std::size_t i = 0; i < values.size(); ++i) {
    for (std::size_t j = 0; j < i; ++j) {
      if (values[j] == values[i]) {
        where[i].fail("value " + format_number(values[i]) + " of `" + p.name +
                      "` appears twice (also at " + where[j].path() + ")");
      }
    }
  }
}

/// Checks one axis's values and builds the model at each (other parameters at their base).
void check_axis_values(const models::ParameterInfo& p, const std::vector<double>& values,
                       const std::vector<Field>& where, ModelFacts& facts, const Spec& spec) {
  for (std::size_t i = 0; i < values.size(); ++i) check_component(where[i], p, values[i]);
  check_distinct(p, values, where);
  models::ParameterValues params = spec.parameters;
  for (std::size_t i = 0; i < values.size(); ++i) {
    params[p.name] = {values[i]};
    const std::string at = " with " + p.name + " = " + format_number(values[i]);
    const auto model = build(*facts.info, params, where[i], at);
    if (model->state_dim() != facts.state_dim) {
      where[i].fail("`" + p.name + "` changes the state dimension of " + facts.info->name +
                    " and cannot be swept");
    }
    if (model->max_stable_dt() < facts.max_dt) {
      facts.max_dt = model->max_stable_dt();
      facts.max_dt_where = at;
    }
  }
}

/// One sweep axis {parameter, values | range}.
SweepAxis read_axis(const Field& item, ModelFacts& facts, const Spec& spec,
                    const std::vector<SweepAxis>& earlier) {
  const Map axis(item, {{"parameter", "values", "range"}, {}, "key", ""});
  const Field name_field = axis.required("parameter");
  SweepAxis out;
  out.parameter = name_field.string();
  out.where = item.where();
  if (out.parameter == "noise.amplitude") {  // the stochastic forcing's amplitude (noise section)
    out.parameter = kNoiseAmplitudeAxis;
    for (std::size_t i = 0; i < earlier.size(); ++i) {
      if (earlier[i].parameter == out.parameter) {
        name_field.fail("`noise.amplitude` is already swept by sweep[" + std::to_string(i) +
                        "]; give each parameter one axis");
      }
    }
    std::vector<Field> where;
    axis_values(axis, out.values, where);
    for (std::size_t i = 0; i < out.values.size(); ++i) {
      if (out.values[i] < 0) where[i].fail("a noise amplitude must be at least 0, got " + format_number(out.values[i]));
      for (std::size_t j = 0; j < i; ++j) {
        if (out.values[j] == out.values[i]) where[i].fail("repeats the value " + format_number(out.values[i]));
      }
    }
    return out;
  }
  const models::ModelInfo& info = *facts.info;
  const models::ParameterInfo* p = find_parameter(info, out.parameter);
  if (!p) {
    name_field.fail("unknown parameter `" + printable(out.parameter) + "` of " + info.name +
                    did_you_mean(out.parameter, parameter_names(info), "it has"));
  }
  if (p->structural) {
    name_field.fail("`" + p->name + "` changes the state dimension of " + info.name +
                    " (structural) and cannot be swept");
  }
  if (p->default_value.size() != 1) {
    name_field.fail("`" + p->name + "` has " + std::to_string(p->default_value.size()) +
                    " components; only scalar parameters can be swept");
  }
  // A swept value would silently replace the fixed one in every case.
  for (const auto& [given, at] : spec.parameters_given) {
    if (given == out.parameter) {
      name_field.fail("`" + given + "` is also set in model.parameters (line " +
                      std::to_string(at.line) + ", column " + std::to_string(at.column) +
                      "); the sweep gives its value in every case, so remove one of them");
    }
  }
  for (std::size_t i = 0; i < earlier.size(); ++i) {
    if (earlier[i].parameter == out.parameter) {
      name_field.fail("`" + out.parameter + "` is already swept by sweep[" + std::to_string(i) +
                      "]; give each parameter one axis");
    }
  }
  std::vector<Field> where;
  axis_values(axis, out.values, where);
  if (out.parameter == spec.schedule.parameter) {
    // offsets added to the parameter's schedule: distinct values; the sums are checked
    // against the bounds and the stable step with the schedule
    check_distinct(*p, out.values, where);
  } else {
    check_axis_values(*p, out.values, where, facts, spec);
  }
  return out;
}

}  // namespace

ModelFacts read_model(const Field& model, Spec& spec) {
  const Map map(model, {{"name", "parameters"}, {}, "key", ""});
  const Field name = map.required("name");
  spec.model = name.string();
  const auto& registry = models::Registry::instance();
  const models::ModelInfo* info = registry.find(spec.model);
  if (!info) {
    const auto names = registry.names();
    name.fail("unknown model `" + printable(spec.model) + "`" +
              (names.empty() ? std::string(" (no models are compiled in)")
                             : did_you_mean(spec.model, names, "available:")));
  }
  models::ParameterValues overrides;
  std::optional<Field> params_field;
  if (map.has("parameters")) {
    params_field.emplace(map.get("parameters"));
    const Map params(*params_field,
                     {parameter_names(*info), {}, "parameter", "of " + info->name});
    for (const auto& key : params.keys()) {
      overrides[key] = read_parameter(params.get(key), *find_parameter(*info, key));
      spec.parameters_given.emplace_back(key, params.key_location(key));
    }
  }
  // Errors of the complete parameter set are reported at model.parameters (or at model).
  const Field& where = params_field ? *params_field : model;
  try {
    spec.parameters = models::complete_parameters(*info, overrides);
  } catch (const std::exception& e) {
    where.fail(std::string("cannot complete the parameters: ") + e.what());
  }
  const auto built = build(*info, spec.parameters, where, " with these parameters");
  ModelFacts facts;
  facts.info = info;
  facts.state_dim = built->state_dim();
  if (facts.state_dim < 1 ||
      built->observables().size() < static_cast<std::size_t>(facts.state_dim)) {
    where.fail(info->name + " reports an inconsistent state dimension or observable list");
  }
  for (const auto& o : built->observables()) facts.observables.push_back(o.name);
  facts.max_dt = built->max_stable_dt();
  facts.has_tangent = built->has_tangent();
  return facts;
}

void read_sweep(const Field& sweep, ModelFacts& facts, Spec& spec) {
  constexpr std::int64_t kMax = std::numeric_limits<std::int64_t>::max();
  std::int64_t cases = 1;
  for (const auto& item : sweep.items()) {
    spec.sweep.push_back(read_axis(item, facts, spec, spec.sweep));
    const auto n = static_cast<std::int64_t>(spec.sweep.back().values.size());
    if (cases > kMax / n) item.fail("the sweep has more cases than a 64-bit count holds");
    cases *= n;
  }
}

void check_stable_dt(const Field& dt, const ModelFacts& facts, const Spec& spec) {
  const double value = spec.integration.dt;
  // The models estimate RK4's limit, 2.785 / |largest eigenvalue| on the negative real axis;
  // forward Euler (euler-maruyama) and Heun are stable there up to 2 / |eigenvalue|.
  const bool rk4 = spec.integration.method == "rk4";
  const double max_dt = rk4 ? facts.max_dt : facts.max_dt * (2.0 / 2.785);
  if (value > max_dt) {
    char limit[32];  // the model's estimate is rough: three significant digits
    std::snprintf(limit, sizeof limit, "%.3g", max_dt);
    dt.fail(format_number(value) + " is outside " + (rk4 ? "RK4" : spec.integration.method) +
            "'s stable range for " + spec.model + " (at most about " + limit +
            facts.max_dt_where + ")");
  }
}

}  // namespace chaosweep::spec
