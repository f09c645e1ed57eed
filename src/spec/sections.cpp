// The campaign, integration, ensemble, statistics, output and run sections.
#include <climits>
#include <algorithm>
#include <cmath>
#include <limits>

#include "spec/sections.hpp"
#include "spec/suggest.hpp"

namespace chaosweep::spec {
namespace {

/// Largest number of members per case (an absurd-size guard; the product with the number of
/// cases and the state dimension is checked separately against int64).
constexpr std::int64_t kMaxMembers = 1000000000;
/// Most steps of dt in one run: step counts stay exact in double arithmetic below 2^53.
constexpr double kMaxSteps = 9007199254740992.0;

std::string non_empty_string(const Field& f) {
  const std::string s = f.string();
  if (s.find_first_not_of(" \t") == std::string::npos) f.fail("must not be empty");
  return s;
}

/// A time that is either 0 (none) or at least one step dt.
void check_zero_or_step(const Field& f, double value, double dt) {
  if (value > 0.0 && value < dt) {
    f.fail("must be 0 or at least integration.dt (" + format_number(dt) + "), got " +
           format_number(value));
  }
}

/// Comma-separated state variable names for messages ("x, y, z"), abbreviated when long.
std::string state_names(const ModelFacts& facts) {
  std::string out;
  const int shown = std::min(facts.state_dim, 6);
  for (int i = 0; i < shown; ++i) out += (i ? ", " : "") + facts.observables[i];
  if (facts.state_dim > shown) out += ", ...";
  return out;
}

void read_initial_state(const Field& f, const ModelFacts& facts, double dt,
                        InitialState& out) {
  if (f.is_list()) {
    out.kind = InitialKind::given;
    out.state = f.numbers();
    if (static_cast<int>(out.state.size()) != facts.state_dim) {
      f.fail("has " + std::to_string(out.state.size()) + " values; " + facts.info->name +
             " has " + std::to_string(facts.state_dim) + " state variables (" +
             state_names(facts) + ")");
    }
    return;
  }
  if (!f.is_map()) {
    f.fail("expected a list of " + std::to_string(facts.state_dim) +
           " numbers or {from: attractor, spinup: T}, got " + f.kind());
  }
  const Map map(f, {{"from", "spinup"}, {}, "key", ""});
  out.kind = InitialKind::attractor;
  map.required("from").choice({"attractor"}, "initial state source");
  if (map.has("spinup")) {
    const Field spinup = map.get("spinup");
    out.spinup = spinup.number_at_least(0.0);
    check_zero_or_step(spinup, out.spinup, dt);
  }
}

void read_perturbation(const Field& f, Perturbation& out) {
  const Map map(f, {{"distribution", "scale"}, {}, "key", ""});
  if (map.has("distribution")) {
    const std::string d = map.get("distribution").choice({"gaussian", "uniform"}, "distribution");
    out.distribution = d == "gaussian" ? Distribution::gaussian : Distribution::uniform;
  }
  if (map.has("scale")) out.scale = map.get("scale").number_at_least(0.0);
}

void read_histogram(const Field& f, const ModelFacts& facts, Histogram& out) {
  const Map map(f, {{"observable", "bins", "range"}, {}, "key", ""});
  out.enabled = true;
  out.observable = read_observable(map.required("observable"), facts);
  out.bins = static_cast<int>(map.required("bins").integer_in(1, 1000000));
  const Field range = map.required("range");
  const auto bounds = range.numbers();
  if (bounds.size() != 2) {
    range.fail("expected [low, high], got " + std::to_string(bounds.size()) + " numbers");
  }
  out.low = bounds[0];
  out.high = bounds[1];
  if (!(out.low < out.high)) {
    range.fail("low must be below high, got [" + format_number(out.low) + ", " +
               format_number(out.high) + "]");
  }
}

void read_trajectories(const Field& f, const Spec& spec, Trajectories& out) {
  const Map map(f, {{"members", "every"}, {}, "key", ""});
  const Field members = map.required("members");
  const std::int64_t m = members.integer_in(0, INT_MAX);
  if (m > spec.ensemble.members) {
    members.fail("must be at most ensemble.members (" + std::to_string(spec.ensemble.members) +
                 "), got " + std::to_string(m));
  }
  out.members = static_cast<int>(m);
  if (out.members == 0 && !map.has("every")) return;
  const Field every = map.required("every");
  out.every = every.number_above(0.0);
  if (out.every < spec.integration.dt) {
    every.fail("must be at least integration.dt (" + format_number(spec.integration.dt) +
               "), got " + format_number(out.every));
  }
}

void read_lyapunov(const Field& f, const ModelFacts& facts, const Spec& spec, Lyapunov& out) {
  const Map map(f, {{"exponents", "renormalise_every"}, {}, "key", ""});
  if (!facts.has_tangent) {
    f.fail(facts.info->name + " has no tangent-linear product, so its Lyapunov exponents "
           "cannot be computed");
  }
  out.enabled = true;
  const Field exponents = map.required("exponents");
  const std::int64_t k = exponents.integer();
  if (k < 1 || k > facts.state_dim) {
    exponents.fail("must be between 1 and the state dimension of " + facts.info->name + " (" +
                   std::to_string(facts.state_dim) + "), got " + std::to_string(k));
  }
  out.exponents = static_cast<int>(k);
  const Field every = map.required("renormalise_every");
  out.renormalise_every = every.number_above(0.0);
  if (out.renormalise_every < spec.integration.dt) {
    every.fail("must be at least integration.dt (" + format_number(spec.integration.dt) +
               "), got " + format_number(out.renormalise_every));
  }
}

/// A time that is a whole number (>= 1) of steps of dt, up to rounding of the decimal values.
void check_whole_steps(const Field& f, double value, double dt) {
  const double steps = value / dt;
  const double whole = std::round(steps);
  if (whole < 1.0 || std::fabs(steps - whole) > 1e-9 * std::max(1.0, whole)) {
    f.fail("must be a whole number of steps of integration.dt (" + format_number(dt) +
           "), got " + format_number(value) + " (" + format_number(steps) + " steps)");
  }
}

void read_twins(const Field& f, const Spec& spec, Twins& out) {
  const Map map(f, {{"scale", "every", "threshold"}, {}, "key", ""});
  out.enabled = true;
  out.scale = map.required("scale").number_above(0.0);
  const Field every = map.required("every");
  out.every = every.number_above(0.0);
  check_whole_steps(every, out.every, spec.integration.dt);
  if (out.every > spec.integration.duration) {
    every.fail("must be at most integration.duration (" +
               format_number(spec.integration.duration) + "), got " + format_number(out.every));
  }
  out.threshold = map.required("threshold").number_above(0.0);
}

/// Lags of statistics.response (each costs a state's worth of history per member).
constexpr double kMaxResponseLags = 10000.0;

void read_response(const Field& f, const ModelFacts& facts, const Spec& spec, Response& out) {
  const Map map(f, {{"max_lag", "every", "groups"}, {}, "key", ""});
  if (facts.info->additive_forcings.empty()) {
    f.fail("model `" + spec.model + "` declares no parameter that enters as an additive forcing, "
           "so there is no response to predict");
  }
  if (spec.schedule.kind != ScheduleKind::none) {
    f.fail("predicts the response of a statistically steady run, but `schedule` makes `" +
           spec.schedule.parameter + "` change in time; remove one of them");
  }
  out.enabled = true;
  const Field every = map.required("every");
  out.every = every.number_above(0.0);
  check_whole_steps(every, out.every, spec.integration.dt);
  const Field max_lag = map.required("max_lag");
  out.max_lag = max_lag.number_above(0.0);
  const double lags = out.max_lag / out.every;
  const double whole = std::round(lags);
  if (whole < 1.0 || std::fabs(lags - whole) > 1e-9 * std::max(1.0, whole)) {
    max_lag.fail("must be a whole multiple (>= 1) of statistics.response.every (" +
                 format_number(out.every) + "), got " + format_number(out.max_lag));
  }
  if (whole > kMaxResponseLags) {
    max_lag.fail("gives " + format_number(whole) + " lags, more than " +
                 format_number(kMaxResponseLags) + "; take a larger every");
  }
  if (out.max_lag >= spec.integration.duration) {
    max_lag.fail("must be shorter than integration.duration (" +
                 format_number(spec.integration.duration) + "), got " +
                 format_number(out.max_lag));
  }
  if (map.has("groups")) {
    const Field groups = map.get("groups");
    out.groups = static_cast<int>(groups.integer_in(2, 1000));
    if (out.groups > spec.ensemble.members) {
      groups.fail("must be at most ensemble.members (" + std::to_string(spec.ensemble.members) +
                  "), got " + std::to_string(out.groups));
    }
  }
}

/// members * cases and state_dim * members * cases must fit in int64 (the sweep has already
/// checked that the number of cases does).
void check_sizes(const Field& members, const Spec& spec, const ModelFacts& facts) {
  constexpr std::int64_t kMax = std::numeric_limits<std::int64_t>::max();
  std::int64_t cases = 1;
  for (const auto& axis : spec.sweep) cases *= static_cast<std::int64_t>(axis.values.size());
  const std::int64_t m = spec.ensemble.members;
  if (m > kMax / cases || m * cases > kMax / facts.state_dim) {
    members.fail(std::to_string(m) + " members x " + std::to_string(cases) + " cases x " +
                 std::to_string(facts.state_dim) +
                 " state variables is more than a 64-bit count holds");
  }
}

}  // namespace

void read_campaign(const Field& campaign, Spec& spec) {
  const Map map(campaign, {{"name", "description"}, {}, "key", ""});
  spec.name = non_empty_string(map.required("name"));
  if (map.has("description")) spec.description = map.get("description").string();
}

void read_integration(const Field& integration, const ModelFacts& facts, Spec& spec) {
  const Map map(integration, {{"method", "dt", "spinup", "duration"}, {}, "key", ""});
  Integration& out = spec.integration;
  if (map.has("method")) {
    const Field method = map.get("method");
    out.method = method.choice({"rk4", "euler-maruyama", "heun"}, "method");
    out.method_where = method.where();
  }
  const Field dt = map.required("dt");
  out.dt = dt.number_above(0.0);
  out.dt_where = dt.where();
  check_stable_dt(dt, facts, spec);
  if (map.has("spinup")) {
    const Field spinup = map.get("spinup");
    out.spinup = spinup.number_at_least(0.0);
    check_zero_or_step(spinup, out.spinup, out.dt);
  }
  const Field duration = map.required("duration");
  out.duration = duration.number_above(0.0);
  if (out.duration < out.dt) {
    duration.fail("must be at least integration.dt (" + format_number(out.dt) + "), got " +
                  format_number(out.duration));
  }
  if ((out.spinup + out.duration) / out.dt > kMaxSteps) {
    duration.fail("spinup + duration is more than 2^53 steps of dt");
  }
}

void read_noise(const Field& noise, const ModelFacts& facts, Spec& spec) {
  const Map map(noise, {{"kind", "amplitude", "variables", "correlation_time", "realisation"},
                        {},
                        "key",
                        ""});
  Noise& out = spec.noise;
  out.where = noise.where();
  const Field kind = map.required("kind");
  const std::string name = kind.choice({"additive", "multiplicative", "red"}, "kind");
  out.kind = name == "additive"         ? NoiseKind::additive
             : name == "multiplicative" ? NoiseKind::multiplicative
                                        : NoiseKind::red;
  if (out.kind == NoiseKind::red) {
    const Field t = map.required("correlation_time");
    out.correlation_time = t.number_above(0.0);
    if (out.correlation_time < spec.integration.dt) {
      t.fail("must be at least integration.dt (" + format_number(spec.integration.dt) +
             ") for the steps to resolve the noise, got " + format_number(out.correlation_time));
    }
  } else if (map.has("correlation_time")) {
    map.get("correlation_time").fail("applies only to kind: red (the noise here is " + name +
                                     ")");
  }
  const auto swept = std::find_if(spec.sweep.begin(), spec.sweep.end(), [](const SweepAxis& a) {
    return a.parameter == kNoiseAmplitudeAxis;
  });
  out.amplitude_swept = swept != spec.sweep.end();
  const bool scheduled = spec.schedule.kind != ScheduleKind::none &&
                         spec.schedule.parameter == kNoiseAmplitudeAxis;
  if (scheduled) {
    if (map.has("amplitude")) {
      map.get("amplitude").fail("also scheduled (line " +
                                std::to_string(spec.schedule.where.line) +
                                "); the schedule gives it at every time, so remove one of them");
    }
  } else if (out.amplitude_swept) {
    if (map.has("amplitude")) {
      map.get("amplitude").fail("also swept (line " +
                                std::to_string(swept->where.line) +
                                "); the sweep gives it in every case, so remove one of them");
    }
  } else {
    out.amplitude = map.required("amplitude").number_at_least(0.0);
  }
  if (map.has("variables")) {
    const Field variables = map.get("variables");
    const std::vector<std::string> state(facts.observables.begin(),
                                         facts.observables.begin() + facts.state_dim);
    for (const Field& v : variables.items()) {
      const std::string name = v.choice(state, "state variable");
      const int index = static_cast<int>(std::find(state.begin(), state.end(), name) - state.begin());
      if (std::find(out.variables.begin(), out.variables.end(), index) != out.variables.end()) {
        v.fail(name + " is listed twice");
      }
      out.variables.push_back(index);
    }
    if (out.variables.empty()) variables.fail("must list at least one state variable");
    std::sort(out.variables.begin(), out.variables.end());
  } else {
    for (int i = 0; i < facts.state_dim; ++i) out.variables.push_back(i);
  }
  for (const int v : out.variables) out.variable_names.push_back(facts.observables[v]);
  if (map.has("realisation")) {
    out.shared = map.get("realisation").choice({"per-member", "shared"}, "realisation") == "shared";
  }
  if (spec.integration.method == "rk4") {
    kind.fail("RK4 takes no noise; set integration.method to euler-maruyama (Ito) or heun "
              "(Stratonovich)");
  }
}

void check_method_features(const Spec& spec) {
  for (const SweepAxis& axis : spec.sweep) {
    if (axis.parameter == kNoiseAmplitudeAxis && spec.noise.kind == NoiseKind::none) {
      fail_at(spec.source_path, axis.where, "sweep",
              "noise.amplitude is swept, but the spec has no noise section");
    }
  }
  if (spec.schedule.kind != ScheduleKind::none && spec.schedule.parameter == kNoiseAmplitudeAxis &&
      spec.noise.kind == NoiseKind::none) {
    fail_at(spec.source_path, spec.schedule.where, "schedule",
            "noise.amplitude is scheduled, but the spec has no noise section");
  }
}

void read_ensemble(const Field& ensemble, const ModelFacts& facts, Spec& spec) {
  const Map map(ensemble, {{"members", "initial_state", "perturbation", "seed", "pair_with_case"},
                           {},
                           "key",
                           ""});
  Ensemble& out = spec.ensemble;
  const Field members = map.required("members");
  out.members = members.integer_in(1, kMaxMembers);
  out.members_where = members.where();
  check_sizes(members, spec, facts);
  if (map.has("initial_state")) {
    read_initial_state(map.get("initial_state"), facts, spec.integration.dt, out.initial);
  }
  if (map.has("perturbation")) read_perturbation(map.get("perturbation"), out.perturbation);
  out.seed = map.required("seed").unsigned_integer();
  if (map.has("pair_with_case")) {
    std::int64_t cases = 1;
    for (const auto& axis : spec.sweep) cases *= static_cast<std::int64_t>(axis.values.size());
    const Field pair = map.get("pair_with_case");
    if (cases < 2) pair.fail("pairs cases with a reference case, but the campaign has one case");
    out.pair_with_case = pair.integer_in(0, cases - 1);
  }
}

void read_statistics(const Field& statistics, const ModelFacts& facts, Spec& spec) {
  const Map map(statistics, {{"observables", "regimes", "histogram", "lyapunov", "twins",
                              "snapshots", "response"},
                             {}, "key", ""});
  Statistics& out = spec.statistics;
  if (map.has("observables")) out.observables = read_observable_names(map.get("observables"), facts);
  if (map.has("regimes")) read_regimes(map.get("regimes"), facts, out.regimes);
  if (map.has("histogram")) read_histogram(map.get("histogram"), facts, out.histogram);
  if (map.has("lyapunov")) read_lyapunov(map.get("lyapunov"), facts, spec, out.lyapunov);
  if (map.has("twins")) read_twins(map.get("twins"), spec, out.twins);
  if (map.has("snapshots")) read_snapshots(map.get("snapshots"), spec, out.snapshots);
  if (map.has("response")) read_response(map.get("response"), facts, spec, out.response);
}

/// output.members: `all`, `none` or {sample: N} with 1 <= N <= ensemble.members.
void read_member_output(const Field& f, const Spec& spec, Output& out) {
  if (!f.is_map()) {
    const std::string value = f.string();
    if (value != "all" && value != "none") {
      f.fail("expected `all`, `none` or {sample: N}, got `" + value + "`");
    }
    out.members = value == "all" ? MemberOutput::all : MemberOutput::none;
    return;
  }
  const Map map(f, {{"sample"}, {}, "key", ""});
  const Field sample = map.required("sample");
  out.member_sample = sample.integer_in(1, kMaxMembers);
  if (out.member_sample > spec.ensemble.members) {
    sample.fail("must be at most ensemble.members (" + std::to_string(spec.ensemble.members) +
                "), got " + std::to_string(out.member_sample));
  }
  out.members = MemberOutput::sample;
}

void read_output(const Field& output, Spec& spec) {
  const Map map(output, {{"archive", "members", "compression", "trajectories"}, {}, "key", ""});
  const Field archive = map.required("archive");
  spec.output.archive = archive.string();
  if (spec.output.archive.empty()) archive.fail("must be a non-empty path");
  spec.output.archive_where = archive.where();
  if (map.has("members")) read_member_output(map.get("members"), spec, spec.output);
  if (map.has("compression")) {
    const Map compression(map.get("compression"), {{"level"}, {}, "key", ""});
    spec.output.compression = static_cast<int>(compression.required("level").integer_in(0, 9));
  }
  if (map.has("trajectories")) {
    read_trajectories(map.get("trajectories"), spec, spec.output.trajectories);
  }
}

void read_checkpoint(const Field& checkpoint, Spec& spec) {
  const Map map(checkpoint, {{"directory", "every_seconds", "keep"}, {}, "key", ""});
  Checkpoint& out = spec.checkpoint;
  if (map.has("directory")) {
    const Field directory = map.get("directory");
    out.directory = directory.string();
    if (out.directory.empty()) directory.fail("must be a non-empty path");
    out.directory_where = directory.where();
  }
  if (map.has("every_seconds")) out.every_seconds = map.get("every_seconds").number_above(0.0);
  if (map.has("keep")) out.keep = static_cast<int>(map.get("keep").integer_in(1, 1000));
}

void read_run(const Field& run, Spec& spec) {
  const Map map(run, {{"batch_size"}, {}, "key", ""});
  if (!map.has("batch_size")) return;
  const Field batch = map.get("batch_size");
  const std::int64_t size = batch.integer();
  if (size <= 0 || size % 8 != 0) {
    batch.fail("must be a positive multiple of 8 (the SIMD width), got " + std::to_string(size));
  }
  if (size > INT_MAX) batch.fail("is out of range, got " + std::to_string(size));
  spec.run.batch_size = static_cast<int>(size);
}

}  // namespace chaosweep::spec
