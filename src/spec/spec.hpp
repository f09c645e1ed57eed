// The campaign spec as plain structs: what spec/ produces from YAML and every later stage reads.
// Values here are complete (defaults filled in) and validated; see spec/load.hpp.
#pragma once

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "models/model.hpp"

namespace chaosweep::spec {

/// Position of a key or value in the spec file (1-based; 0 when unknown).
struct Location {
  int line = 0;
  int column = 0;
};

/// One sweep axis: a scalar model parameter and the values it takes.
/// The sweep axis of the noise amplitude (`parameter: noise.amplitude` in the spec), also the
/// name of its values in the archive (/case/noise_amplitude).
inline constexpr const char* kNoiseAmplitudeAxis = "noise_amplitude";

struct SweepAxis {
  std::string parameter;
  std::vector<double> values;  // at least one, all finite, no duplicates
  Location where;
};

enum class InitialKind { given, attractor };

/// Where members start: a given state, or a point on the attractor reached by integrating the
/// model's default initial state for `spinup` time units (per case, before perturbation).
struct InitialState {
  InitialKind kind = InitialKind::attractor;
  std::vector<double> state;  // given: length state_dim
  double spinup = 50.0;       // attractor: time units
};

enum class Distribution { gaussian, uniform };

/// Each member's initial state is the base state plus scale * noise, componentwise; gaussian
/// noise has unit standard deviation, uniform noise lies in [-1, 1).
struct Perturbation {
  Distribution distribution = Distribution::gaussian;
  double scale = 1e-3;
};

struct Ensemble {
  std::int64_t members = 0;  // per case, >= 1
  Location members_where;    // for errors about the campaign's size
  InitialState initial;
  Perturbation perturbation;
  std::uint64_t seed = 0;
  /// Paired cases (`pair_with_case`): member m of every case starts from member m's state of
  /// this reference case (its base state, its perturbation key) and draws its noise and twin
  /// direction from the reference's keys, so cases differ only by their parameters. -1: none.
  std::int64_t pair_with_case = -1;
};

/// The case whose keys (base state, perturbations, noise, twin directions) case `c` uses:
/// the reference case when cases are paired, else c itself.
inline std::int64_t key_case(const Ensemble& ensemble, std::int64_t c) {
  return ensemble.pair_with_case >= 0 ? ensemble.pair_with_case : c;
}

struct Integration {
  /// rk4 (deterministic only), euler-maruyama (Ito) or heun (Stratonovich); the last two
  /// also run without noise (forward Euler, the explicit trapezoidal rule).
  std::string method = "rk4";
  Location method_where;       // for the features a method does not run (yet)
  double dt = 0.01;            // > 0
  Location dt_where;           // for errors found later (a spin-up that diverges)
  double spinup = 0.0;         // >= 0, time units discarded before accumulation
  double duration = 0.0;       // > 0, time units accumulated
};

/// Stochastic forcing (`noise`) on the listed state variables i, with independent Wiener
/// processes W_i and amplitude A: additive dx_i = f_i dt + A dW_i, multiplicative
/// dx_i = f_i dt + A x_i dW_i, red dx_i = f_i dt + A eta_i dt with eta_i a unit-variance
/// Ornstein-Uhlenbeck process of correlation time T (d eta = -eta/T dt + sqrt(2/T) dW_i).
/// From t = 0 of every member's integration, spin-up included.
enum class NoiseKind { none, additive, multiplicative, red };

struct Noise {
  NoiseKind kind = NoiseKind::none;
  double amplitude = 0.0;       // >= 0; per case when swept (kNoiseAmplitudeAxis)
  bool amplitude_swept = false;
  double correlation_time = 0.0;  // red: T > 0
  std::vector<int> variables;   // state indices, ascending, distinct; default every variable
  std::vector<std::string> variable_names;  // the model's names of `variables`, same order
  bool shared = false;          // one realisation for every member of a case
  Location where;               // the section
};

/// "additive", "multiplicative" or "red" (for messages, the check report and the archive).
inline const char* noise_kind_name(NoiseKind kind) {
  return kind == NoiseKind::multiplicative ? "multiplicative"
         : kind == NoiseKind::red          ? "red"
                                           : "additive";
}

/// The sense in which a stochastic integration method solves a noisy equation: "Ito"
/// (euler-maruyama) or "Stratonovich" (heun).
inline const char* noise_calculus(const std::string& method) {
  return method == "heun" ? "Stratonovich" : "Ito";
}

enum class RegimeKind { none, sign, nearest };

/// Regime classification of every step of every member.
/// sign: regime 0 while observable >= 0, regime 1 while observable < 0.
/// nearest: the regime whose centroid is nearest (Euclidean) in the space of `coordinates`.
struct Regimes {
  RegimeKind kind = RegimeKind::none;
  std::string observable;                    // sign
  std::vector<std::string> coordinates;      // nearest: observables the centroids are given in
  std::vector<std::vector<double>> centroids;  // nearest: one per regime
  std::vector<std::string> labels;           // one per regime (defaults: sign: positive,
                                             // negative; nearest: regime0, regime1, ...)
};

struct Histogram {
  bool enabled = false;
  std::string observable;
  int bins = 0;  // >= 1
  double low = 0.0, high = 0.0;  // low < high; values outside are not counted
};

/// Lyapunov exponents of every member by the QR method (statistics.lyapunov): the leading
/// `exponents` exponents, tangent vectors re-orthonormalised every `renormalise_every` time
/// units. Only for models with a tangent-linear product.
struct Lyapunov {
  bool enabled = false;
  int exponents = 0;               // 1 .. state_dim
  double renormalise_every = 0.0;  // time units, >= integration.dt
};

/// Twin experiment (statistics.twins): at the end of the spin-up every member gets a twin
/// `scale` away along a random unit direction; the log of their Euclidean separation is sampled
/// every `every` time units (a whole number of steps), and a member's horizon is the first such
/// lead at which the separation exceeds `threshold` times the member's spread (docs/estimates.md, "Twin
/// experiments").
struct Twins {
  bool enabled = false;
  double scale = 0.0;      // > 0, model units (Euclidean norm over the state variables)
  double every = 0.0;      // time units, a whole multiple of integration.dt, <= duration
  double threshold = 0.0;  // > 0, in units of the member's spread
};

/// Ensemble statistics across members at snapshot times (statistics.snapshots): at
/// t_k = spinup + k * every, k = 0 .. floor(duration / every), the mean and variance across
/// the case's valid members of every selected observable, and the share of them in each regime.
struct Snapshots {
  bool enabled = false;
  double every = 0.0;  // time units, a whole number of steps dt, at most integration.duration
};

/// The response predicted from fluctuations (statistics.response): every member is sampled
/// every `every` time units over the accumulation window, and the lagged covariances of each
/// selected observable with the state, at lags 0, every, ..., max_lag, give the predicted
/// static response to each of the model's additive forcings (quasi-Gaussian
/// fluctuation-dissipation relation); its error is a jackknife over `groups` groups of members.
struct Response {
  bool enabled = false;
  double max_lag = 0.0;  // time units, a whole multiple of every, below integration.duration
  double every = 0.0;    // time units, a whole number of steps dt
  int groups = 8;        // used as min(groups, ensemble.members)
};

struct Statistics {
  std::vector<std::string> observables;  // default: every observable of the model
  Regimes regimes;
  Histogram histogram;
  Lyapunov lyapunov;
  Twins twins;
  Snapshots snapshots;
  Response response;
};

/// Full state paths of the first `members` members of every case, sampled every `every` time
/// units from t = 0 (spin-up included) to the end of the run.
struct Trajectories {
  int members = 0;
  double every = 0.0;
};

/// Which members' own results (/member/*) the archive holds (`output.members`): every member,
/// none, or the first `sample` members of every case. Ensemble estimates are the same whatever
/// is chosen. Unset means all, allowed only up to kMaxMembersUnset members in the campaign.
enum class MemberOutput { unset, all, none, sample };
inline constexpr std::int64_t kMaxMembersUnset = 1000000;

struct Output {
  std::string archive;  // path as written in the spec (relative to the working directory)
  Location archive_where;
  MemberOutput members = MemberOutput::unset;
  std::int64_t member_sample = 0;  // with MemberOutput::sample: members per case kept, >= 1
  int compression = 0;  // output.compression.level: deflate 1-9 of the per-member and trajectory
                        // datasets after shuffling; 0 stores them uncompressed
  Trajectories trajectories;
};

/// Checkpoints of a run in progress (see docs/running.md, "Interruptions and resume").
struct Checkpoint {
  std::string directory;      // empty: "<archive>.checkpoints" beside the archive
  Location directory_where;
  double every_seconds = 300.0;  // wall-clock seconds between checkpoints of batches in progress
  int keep = 2;                  // checkpoint generations kept (>= 1)
};

enum class ScheduleKind { none, constant, ramp, step, periodic };

/// A time-dependent value of one scalar, non-structural model parameter (`schedule:`), as a
/// function of model time t counted from the start of the integration (t = 0 at the start of
/// the spin-up, as for output.trajectories):
///   constant  value
///   ramp      from (t <= start), from + (to - from) (t - start) / (end - start), to (t >= end)
///   step      before (t < at), after (t >= at)
///   periodic  mean + amplitude sin(2 pi t / period + phase), phase in radians
/// When a sweep axis varies the same parameter, the case's swept value is added (an offset).
struct Schedule {
  ScheduleKind kind = ScheduleKind::none;
  std::string parameter;
  double value = 0.0;                                      // constant
  double from = 0.0, to = 0.0, start = 0.0, end = 0.0;     // ramp: start < end
  double before = 0.0, after = 0.0, at = 0.0;              // step
  double mean = 0.0, amplitude = 0.0, period = 0.0, phase = 0.0;  // periodic: period > 0
  bool offset_by_sweep = false;  // a sweep axis on `parameter` adds its value
  Location where;
};

struct Run {
  int batch_size = 64;  // members per work unit, a multiple of 8
};

struct Spec {
  std::string source_path;  // as given on the command line
  std::string text;         // the file verbatim
  std::string sha256;       // of text
  std::string name;
  std::string description;
  std::string model;                    // registry name
  models::ParameterValues parameters;   // complete: defaults with the spec's overrides
  // set in model.parameters, with the position of each key; the others are defaults
  std::vector<std::pair<std::string, Location>> parameters_given;
  std::vector<SweepAxis> sweep;         // may be empty: one case with the base parameters
  Schedule schedule;                    // kind none: every parameter constant in time
  Ensemble ensemble;
  Integration integration;
  Noise noise;                          // form none: deterministic
  Statistics statistics;
  Output output;
  Checkpoint checkpoint;
  Run run;
};

}  // namespace chaosweep::spec
