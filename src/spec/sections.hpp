// Readers for the sections of a campaign spec, each filling its part of Spec from a checked
// map. Internal to spec/; load.cpp calls them in order: campaign, model, sweep, integration,
// ensemble, statistics, output, run.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "models/model.hpp"
#include "spec/reader.hpp"
#include "spec/spec.hpp"

namespace chaosweep::spec {

/// What the loader learns by building the model: the same for every case, since only
/// non-structural parameters can be swept.
struct ModelFacts {
  const models::ModelInfo* info = nullptr;
  int state_dim = 0;
  std::vector<std::string> observables;  // the model's observables(), state variables first
  /// Smallest max_stable_dt() over the base parameters and every swept value.
  double max_dt = 0.0;
  std::string max_dt_where;  // "" for the base parameters, else " with forcing = 8"
  bool has_tangent = false;  // the model provides tangent() (needed for statistics.lyapunov)
};

// model_check.cpp
/// `model`: name (registry), parameters (checked, completed with defaults); builds the model.
ModelFacts read_model(const Field& model, Spec& spec);
/// `sweep`: axes of scalar, non-structural parameters; builds the model at every value.
void read_sweep(const Field& sweep, ModelFacts& facts, Spec& spec);
/// Refuses a step above the model's stable RK4 range.
void check_stable_dt(const Field& dt, const ModelFacts& facts, const Spec& spec);

// sections.cpp
void read_campaign(const Field& campaign, Spec& spec);
void read_integration(const Field& integration, const ModelFacts& facts, Spec& spec);
void read_ensemble(const Field& ensemble, const ModelFacts& facts, Spec& spec);
/// `noise`: the stochastic forcing; needs a stochastic integration.method.
void read_noise(const Field& noise, const ModelFacts& facts, Spec& spec);
/// Refuses what the stochastic methods do not run yet (called once every section is read).
void check_method_features(const Spec& spec);
void read_statistics(const Field& statistics, const ModelFacts& facts, Spec& spec);
void read_output(const Field& output, Spec& spec);
void read_checkpoint(const Field& checkpoint, Spec& spec);
void read_run(const Field& run, Spec& spec);

// schedule.cpp
/// `schedule`: one scalar, non-structural parameter as a function of time; checks its values
/// (with any sweep offset) against the parameter's bounds and the stable dt. `model` is the
/// model section (the parameter must not also be set there). Read after the sweep.
void read_schedule(const Field& schedule, const Field& model, ModelFacts& facts, Spec& spec);
/// The name under schedule.parameter as written ("" when absent or not a plain string);
/// read_schedule() checks it.
std::string scheduled_parameter(const Field& schedule);
/// statistics.snapshots {every}; read after the integration section.
void read_snapshots(const Field& snapshots, const Spec& spec, Snapshots& out);

// regimes.cpp
void read_regimes(const Field& regimes, const ModelFacts& facts, Regimes& out);
/// A list of observable names of the model: non-empty, no repeats, each one known.
std::vector<std::string> read_observable_names(const Field& list, const ModelFacts& facts);
/// One observable name of the model (with a did-you-mean otherwise).
std::string read_observable(const Field& name, const ModelFacts& facts);

}  // namespace chaosweep::spec
