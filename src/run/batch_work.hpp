// Internal to run/: the integration of one batch and its per-step accumulators.
// Pure numerics: no MPI, no HDF5, no YAML, no logging.
#pragma once

#include <cstdint>
#include <optional>
#include <vector>

#include "integrators/rk4.hpp"
#include "models/model.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"
#include "stats/histogram.hpp"
#include "stats/regimes.hpp"
#include "stats/time_moments.hpp"

namespace chaosweep::run {

/// What every batch of one case needs, resolved against the model once per case.
struct Setup {
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
};

/// One batch from its initial states to its BatchResult. The state is a full-width SoA array
/// [state_dim][width]; columns count .. width-1 are padding copies of the first member.
class BatchWork {
 public:
  /// `initial` is [count][state_dim], the real members' initial states in member order.
  BatchWork(const Setup& setup, const models::Model& model, const std::vector<double>& base,
            const plan::Batch& batch, std::vector<double> initial);
  BatchResult run();

 private:
  void load_initial_states();
  void check_finite();
  void accumulate();
  void sample_trajectory(std::int64_t sample);
  void collect_moments();
  void collect_regimes();
  void collect_histogram();

  const Setup& setup_;
  const models::Model& model_;
  const std::vector<double>& base_;
  int count_;
  integrators::Rk4Batch stepper_;
  std::vector<double> x_;                 // [state_dim][width]
  std::vector<double> derived_;           // [derived observables][width]
  std::vector<const double*> column_;     // every model observable -> its row of `width` values
  std::vector<const double*> selected_;   // the selected observables' rows
  std::vector<const double*> regime_columns_;  // the regime coordinates' rows
  std::vector<std::uint8_t> non_finite_;  // [width]
  stats::TimeMoments moments_;
  std::optional<stats::RegimeCounter> regimes_;
  std::vector<int> regime_;               // [width], scratch
  std::optional<stats::MemberHistogram> histogram_;
  BatchResult result_;
};

}  // namespace chaosweep::run
