// Integrates one batch of members from its initial states to the end of the run and returns
// every per-member statistic. Pure numerics: no MPI, no HDF5, no YAML, no logging.
//
// The result for a member depends only on (spec, case, member index): the initial
// perturbation comes from a counter-based generator keyed by (seed, case, member), batches are
// always integrated at full width (padding members are copies that are discarded), and the
// order of floating-point operations per member is fixed. Hence the numbers are bitwise the
// same whichever rank runs the batch and in whatever order.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "core/error.hpp"
#include "models/model.hpp"
#include "plan/plan.hpp"
#include "spec/spec.hpp"

namespace chaosweep::run {

/// Per-member status codes (archive /member/status).
enum MemberStatus : std::uint8_t { kValid = 0, kNonFinite = 1 };

/// Everything one batch produced, for its `count` real members (padding dropped).
/// Arrays are member-major: [count][...].
struct BatchResult {
  std::int64_t batch_index = 0;
  std::int64_t case_index = 0;
  std::int64_t first_member = 0;
  int count = 0;
  std::vector<double> initial_state;           // [count][state_dim]
  std::vector<std::uint8_t> status;            // [count]
  std::vector<double> time_mean;               // [count][n_observables], NaN if not valid
  std::vector<double> time_variance;           // [count][n_observables] (n-1 denominator)
  std::vector<double> time_mean_stderr;        // [count][n_observables], blocking estimate
  std::vector<double> time_mean_tau;           // [count][n_observables], tau_int, time units
  std::vector<double> time_mean_samples;       // [count][n_observables], n_eff = n / (2 tau_int)
  // Extremes over the samples of the time mean (the earliest sample among equal values); the
  // time of a sample taken after step k is k * dt from t = 0 (spin-up included), as the
  // snapshot times are. All four NaN if not valid.
  std::vector<double> extreme_min;             // [count][n_observables]
  std::vector<double> extreme_max;             // [count][n_observables]
  std::vector<double> extreme_min_time;        // [count][n_observables], time units
  std::vector<double> extreme_max_time;        // [count][n_observables], time units
  std::vector<double> regime_fraction;         // [count][n_regimes]
  std::vector<double> regime_mean_residence;   // [count][n_regimes], time units; NaN if never
  std::vector<std::int64_t> regime_transitions;  // [count]
  std::vector<std::int64_t> histogram;         // [bins], summed over the valid members
  std::vector<double> trajectory;              // [stored members in this batch][samples][state_dim]
  int trajectory_members = 0;                  // members of this batch among the stored ones
  std::vector<double> lyapunov;                // [count][exponents] when requested, else empty
  // Twin experiment (statistics.twins, see run/twins.hpp); empty when not requested.
  std::vector<double> twin_moments;            // [leads][3]: n, mean, m2 of the log separation
                                               // over the batch's valid pairs
  std::vector<double> spread;                  // [count], NaN if the pair is not valid
  std::vector<double> horizon;                 // [count], time units, NaN if never reached
  /// Snapshots (when requested, else empty), summarised over the batch's valid members:
  std::vector<double> snapshot_moments;        // [snapshots][observables][3]: n, mean, m2
  std::vector<std::int64_t> snapshot_regimes;  // [snapshots][regimes]: valid members in each
};

/// Complete state of a batch in progress: everything needed to continue it and obtain bitwise
/// the same BatchResult as an uninterrupted run. Arrays are named (names are stable: they are
/// stored in checkpoints) and hold raw values; the checkpoint layer treats them as opaque.
struct BatchState {
  std::int64_t batch_index = 0;
  std::int64_t step = 0;  // steps already taken, 0 .. plan.total_steps()
  std::vector<std::pair<std::string, std::vector<double>>> reals;
  std::vector<std::pair<std::string, std::vector<std::int64_t>>> integers;
};

/// A batch being integrated, which can stop after any step and continue later (in this
/// process, or in another from a saved BatchState). Advancing in chunks of any sizes gives
/// bitwise the same result as advancing in one go.
class BatchProgress {
 public:
  virtual ~BatchProgress() = default;
  virtual std::int64_t step() const = 0;         // steps taken so far
  virtual std::int64_t total_steps() const = 0;  // plan.total_steps()
  bool done() const { return step() >= total_steps(); }
  /// Integrates at most `max_steps` further steps (fewer at the end of the run).
  virtual void advance(std::int64_t max_steps) = 0;
  /// The complete state after the steps taken so far.
  virtual BatchState save() const = 0;
  /// The batch's result; only when done().
  virtual BatchResult finish() = 0;
};

/// The spin-up of `initial_state: {from: attractor}` ended on a non-finite state.
class SpinupDiverged : public Error {
 public:
  using Error::Error;
};

/// The base state members of case `c` are perturbed from: the given initial state, or the
/// model's default state integrated to the attractor for `initial_state.spinup` with the case's
/// parameters at full batch width (every column identical, so any process that computes it gets
/// the same bits). Throws SpinupDiverged when that integration ends non-finite.
std::vector<double> case_base_state(const spec::Spec& spec, const plan::Plan& plan,
                                    const plan::Case& c);

/// Runs the batches of one case. Construct once per case (it builds the model and, unless
/// given, the case's base state), then call run() for each batch of that case, or
/// start()/resume() to integrate a batch in chunks.
class CaseRunner {
 public:
  CaseRunner(const spec::Spec& spec, const plan::Plan& plan, const plan::Case& c);
  /// With the base state already computed by case_base_state() for this case.
  CaseRunner(const spec::Spec& spec, const plan::Plan& plan, const plan::Case& c,
             std::vector<double> base);
  ~CaseRunner();
  /// start(batch), advanced to the end, finished.
  BatchResult run(const plan::Batch& batch) const;
  /// A batch at step 0 (initial states drawn). The CaseRunner must outlive it.
  std::unique_ptr<BatchProgress> start(const plan::Batch& batch) const;
  /// A batch continued from `state` (saved by BatchProgress::save() for the same spec, plan and
  /// batch). Throws chaosweep::Error if the state does not fit the batch (wrong names/sizes).
  std::unique_ptr<BatchProgress> resume(const plan::Batch& batch, const BatchState& state) const;

  /// The base state members are perturbed from (given, or reached on the attractor).
  const std::vector<double>& base_state() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// The initial state of member (case, member): base + scale * noise from the counter-based
/// generator keyed by (seed, case, member). Exposed for tests.
std::vector<double> member_initial_state(const spec::Spec& spec, const std::vector<double>& base,
                                         std::int64_t case_index, std::int64_t member);

}  // namespace chaosweep::run
