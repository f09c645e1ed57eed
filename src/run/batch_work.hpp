// Internal to run/: the integration of one batch and its per-step accumulators.
// Pure numerics: no MPI, no HDF5, no YAML, no logging.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "models/model.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/kernels.hpp"
#include "run/twins.hpp"
#include "run/snapshots.hpp"
#include "spec/spec.hpp"
#include "stats/extremes.hpp"
#include "stats/histogram.hpp"
#include "stats/lagged_sums.hpp"
#include "stats/regimes.hpp"
#include "stats/time_moments.hpp"

namespace chaosweep::run {

struct PairedReference;

/// What every batch of one case needs, resolved against the model once per case.
struct Setup {
  std::string model;                   // registry name
  const models::ModelInfo* model_info = nullptr;  // the plan's resolved model
  models::ParameterValues parameters;  // the case's complete parameters
  KernelKind kernel = KernelKind::generic;
  int width = 0;                 // batch_size: every batch is integrated at this width
  int state_dim = 0;
  int n_model_observables = 0;   // model.observables().size()
  double dt = 0.0;
  std::int64_t spinup_steps = 0, total_steps = 0;
  std::int64_t trajectory_every = 0, trajectory_samples = 0;  // 0: no trajectories
  int trajectory_members = 0;
  std::vector<int> observables;  // selected, indices into the model's observables()
  spec::RegimeKind regime_kind = spec::RegimeKind::none;
  int n_regimes = 0;
  std::vector<int> regime_coordinates;  // sign: the one observable; nearest: the coordinates
  std::vector<std::vector<double>> centroids;  // nearest: [n_regimes][coordinates]
  std::optional<spec::Histogram> histogram;
  int histogram_observable = -1;
  bool needs_derived = false;  // some used observable is a derived one
  TwinSetup twins;             // twins.enabled() when statistics.twins is given
  std::optional<spec::Schedule> schedule;  // a time-dependent parameter (generic kernel only)
  double schedule_offset = 0.0;            // the case's swept value of that parameter, or 0
  std::int64_t snapshot_every = 0, snapshot_count = 0;  // 0: no snapshots
  std::string method = "rk4";  // integration.method
  spec::Noise noise;           // form none: no noise
  std::uint64_t seed = 0;      // ensemble.seed, keys the noise
  std::int64_t case_index = 0;
  std::int64_t key_case = 0;   // the case whose keys the members use (spec::key_case)
  /// Paired cases with snapshots: every batch reports the moments of its members' differences
  /// from the reference case's same members at each snapshot time (BatchResult::paired_moments).
  bool paired_snapshots = false;
  /// The reference case, whose members a batch integrates beside its own to difference them
  /// (null for the reference case itself, whose differences are exactly 0).
  std::shared_ptr<const PairedReference> paired;
  /// statistics.response: sample k at step spinup_steps + k * response_every, k = 0 ..
  /// response_samples - 1 (0: off); member m of the case (of `members`) in group
  /// m * response_groups / members.
  std::int64_t response_every = 0, response_samples = 0;
  int response_lags = 0, response_groups = 0;
  std::int64_t members = 0;
};

/// The reference case of paired cases: its Setup, its model and base state (the same base
/// state as every paired case's).
struct PairedReference {
  Setup setup;
  std::unique_ptr<models::Model> model;
  std::vector<double> base;
};

/// The case's Setup: the spec's choices resolved against the model (observable indices,
/// regimes, schedule offset, noise amplitude of the case, kernel).
Setup make_setup(const spec::Spec& spec, const plan::Plan& plan, const plan::Case& c,
                 const models::Model& model);

/// One batch from its initial states to its BatchResult, advanced in chunks of any size.
/// The state is a full-width SoA array [state_dim][width]; columns count .. width-1 are padding
/// copies of the first member. The CaseRunner's Setup, model and base state must outlive it.
class BatchWork final : public BatchProgress {
 public:
  /// `initial` is [count][state_dim], the real members' initial states in member order.
  /// The batch is at step 0: initial states loaded, checked, trajectory sample 0 taken.
  BatchWork(const Setup& setup, const models::Model& model, const std::vector<double>& base,
            const plan::Batch& batch, std::vector<double> initial);
  /// A batch continued from a saved state (same setup and batch); throws chaosweep::Error when
  /// the state's names or sizes do not fit.
  BatchWork(const Setup& setup, const models::Model& model, const std::vector<double>& base,
            const plan::Batch& batch, const BatchState& state);

  std::int64_t step() const override { return step_; }
  std::int64_t total_steps() const override { return setup_.total_steps; }
  void advance(std::int64_t max_steps) override;
  BatchState save() const override;
  BatchResult finish() override;

 private:
  BatchWork(const Setup& setup, const models::Model& model, const std::vector<double>& base,
            const plan::Batch& batch);
  void restore(const BatchState& state);
  void load_initial_states();
  std::int64_t segment_end(std::int64_t last) const;
  void after_step(std::int64_t step);
  void check_finite();
  void sample_trajectory(std::int64_t sample);
  void take_snapshot(std::int64_t step);
  bool response_sample_at(std::int64_t step) const;
  int tap_response_samples(std::int64_t end);
  void take_response_sample(std::int64_t step);
  void add_response_sample(std::int64_t step, const double* x);
  void collect_response();
  void collect_moments();
  void collect_extremes();
  void collect_regimes();
  void collect_histogram();

  const Setup& setup_;
  const models::Model& model_;
  const std::vector<double>& base_;
  int count_;
  std::vector<double> x_;                 // [state_dim][width]
  std::vector<std::uint8_t> non_finite_;  // [width]
  stats::TimeMoments moments_;            // fused kernel: every state variable; else selected
  std::vector<int> moment_series_;        // selected observable -> its series in moments_
  stats::Extremes extremes_;              // the same series as moments_
  std::optional<stats::RegimeCounter> regimes_;
  std::optional<stats::MemberHistogram> histogram_;
  std::optional<SnapshotRecorder> snapshots_;
  std::unique_ptr<Kernel> kernel_;
  std::optional<TwinPairs> twins_;
  /// The reference case's members (Setup::paired), integrated beside the batch's own.
  struct Shadow {
    std::vector<double> x;                 // [state_dim][width]
    std::vector<std::uint8_t> non_finite;  // [width]
    std::unique_ptr<Kernel> kernel;
    std::optional<SnapshotRecorder> snapshots;
  };
  std::optional<Shadow> shadow_;
  /// statistics.response: the sums of the groups the batch's members belong to (the first
  /// being response_first_group_), and the derived observables' rows at a sample.
  std::optional<stats::LaggedSums> response_;
  int response_first_group_ = 0;
  std::vector<double> response_derived_;
  /// The kernel records the response samples inside its runs of steps (Kernel::taps()).
  bool tap_response_ = false;
  std::vector<int> tap_after_;       // [kMaxSegment]
  std::vector<double> tap_states_;   // [kMaxSegment][state_dim][width]
  BatchResult result_;
  std::int64_t step_ = 0;  // steps taken, 0 .. total_steps
  bool finished_ = false;
};

}  // namespace chaosweep::run
