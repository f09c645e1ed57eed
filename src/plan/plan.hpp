// Spec -> cases x members -> batches. Pure: no MPI, no HDF5, no YAML.
//
// A case is one point of the sweep grid (cartesian product of the axes, the last axis varying
// fastest). A batch is a block of at most batch_size consecutive members of one case; batches
// are numbered case-major, and are the unit of scheduling, checkpointing and reduction. The
// plan describes them arithmetically (Plan::batch), so its size does not grow with the
// number of members.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "models/model.hpp"
#include "results/table.hpp"
#include "spec/spec.hpp"

namespace chaosweep::plan {

struct Case {
  std::int64_t index = 0;
  std::vector<double> axis_values;     // one per sweep axis
  models::ParameterValues parameters;  // complete parameters of this case
};

struct Batch {
  std::int64_t index = 0;         // global batch number
  std::int64_t case_index = 0;
  std::int64_t first_member = 0;  // member index within the case
  int count = 0;                  // real members in the batch (<= batch_size); the rest is padding
};

/// The twin experiment's lead times, as step numbers (statistics.twins; leads 0 without twins).
struct TwinTimes {
  std::int64_t start_step = 0;   // end of the spin-up
  std::int64_t every_steps = 0;  // steps between leads, >= 1 (0 without twins)
  std::int64_t leads = 0;        // K + 1 = floor(accumulate_steps / every_steps) + 1
  std::int64_t last_step() const { return start_step + (leads - 1) * every_steps; }
};

/// Groups of members of paired cases (Plan::pair_groups), at most the members.
constexpr int kPairGroups = 64;

/// Everything resolved from the spec once: the model, the cases and batches, and every time
/// span as a whole number of steps of dt (rounded to the nearest), so that no other part of
/// the program rounds times or looks the model up again.
struct Plan {
  const models::ModelInfo* model = nullptr;  // the spec's model in the registry
  std::vector<Case> cases;
  std::int64_t members = 0;  // per case
  int batch_size = 0;        // width every batch is integrated at
  int state_dim = 0;
  std::vector<std::string> state_names;      // the model's state variables
  std::vector<std::string> observables;      // selected observables, in archive order
  std::vector<int> observable_index;         // index of each into the model's observables()
  std::vector<std::string> regime_labels;    // empty when no regimes
  std::int64_t spinup_steps = 0;             // integration.spinup / dt, rounded
  std::int64_t accumulate_steps = 0;         // integration.duration / dt, rounded
  std::int64_t trajectory_every_steps = 0;   // 0 when no trajectories
  std::int64_t trajectory_samples = 0;       // samples per stored member, t = 0 included
  int trajectory_members = 0;                // stored members per case (<= members)
  std::int64_t archived_members = 0;         // members per case in /member/* (output.members)
  std::int64_t snapshot_every_steps = 0;     // 0 when no snapshots
  std::int64_t snapshot_count = 0;           // snapshot times per case: at steps
                                             // spinup_steps + k * snapshot_every_steps
  TwinTimes twins;                           // leads 0 without twins
  /// statistics.response: samples every response_every_steps from the end of the spin-up
  /// (response_samples per member), response_lags lags, members in response_groups groups
  /// (member m of a case in group m * groups / members); 0 without.
  std::int64_t response_every_steps = 0, response_samples = 0;
  int response_lags = 0, response_groups = 0;
  std::vector<std::string> forcings;  // the model's additive forcings (with statistics.response)
  /// The group of member m of a case (statistics.response).
  int response_group(std::int64_t member) const {
    return static_cast<int>(member * response_groups / members);
  }
  /// Paired cases with a sweep (ensemble.pair_with_case): the members' time means and regime
  /// fractions are also summed per group of members (member m in group m * pair_groups /
  /// members), the same groups in every case, so that the reduction can estimate how the
  /// paired cases' ensemble means correlate; 0 otherwise.
  int pair_groups = 0;
  int pair_group(std::int64_t member) const {
    return static_cast<int>(member * pair_groups / members);
  }
  std::int64_t lyapunov_every_steps = 0;     // re-orthonormalisation period, 0 without
  std::int64_t attractor_spinup_steps = 0;   // initial_state: {from: attractor}, 0 otherwise
  int lyapunov_exponents = 0;                // 0 without Lyapunov exponents
  int histogram_bins = 0;                    // 0 without a histogram
  int sweep_axes = 0;
  results::Options outputs;                  // which results of the table the campaign has

  std::int64_t total_steps() const { return spinup_steps + accumulate_steps; }
  std::int64_t member_count() const { return members * static_cast<std::int64_t>(cases.size()); }
  /// Batches of one case: ceil(members / batch_size) (0 when either is below 1).
  std::int64_t batches_per_case() const;
  /// Batches of the campaign: cases x batches_per_case().
  std::int64_t batch_count() const;
  /// Batch `index` of [0, batch_count()), computed, with p = batches_per_case():
  ///   case_index = cases[index / p].index, first_member = (index % p) * batch_size,
  ///   count = min(batch_size, members - first_member).
  /// Throws std::out_of_range for an index outside that range.
  Batch batch(std::int64_t index) const;
  /// The size of archive dimension `dim` (results/table.hpp) in this campaign; throws
  /// std::logic_error for a dimension the table does not define.
  std::uint64_t extent(const std::string& dim) const;
};

/// "case 3 (F 12)", or "case 3 (F 12, h 0.5)" with two axes: the case's index and its swept
/// values (each the shortest decimal that reads back as the value); "case 0" without a sweep.
std::string describe_case(const spec::Spec& spec, const Case& c);

/// Number of whole steps of length dt in `span` time units, rounded to the nearest: the one
/// conversion of a model time to a step count, used for every span of the plan and by anything
/// else that turns a time into steps.
std::int64_t whole_steps(double span, double dt);

/// Builds the plan; throws SpecError for inconsistent combinations the loader cannot see.
Plan make_plan(const spec::Spec& spec);

/// Contiguous share [first, last) of `n` items for `rank` of `size` (first ranks get one more).
struct Range {
  std::int64_t first = 0;
  std::int64_t last = 0;
};
Range share(std::int64_t n, int rank, int size);
/// The rank whose share(n, rank, size) holds item `index` (std::out_of_range outside [0, n)).
int owner(std::int64_t n, std::int64_t index, int size);

}  // namespace chaosweep::plan
