// Collective archive writer (see writer.hpp). Layout: the schema's tables (schema.cpp), from
// which every dataset's dimensions, units and long name and every dimension's units and fixed
// coordinate values are taken.
#include "archive/writer.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <map>
#include <stdexcept>

#include "archive/schema.hpp"
#include "archive/seal.hpp"
#include "checkpoint/files.hpp"
#include "core/error.hpp"
#include "core/version.hpp"
#include "h5/h5.hpp"
#include "parallel/communicator.hpp"
#include "run/twins.hpp"
#include "stats/histogram.hpp"

namespace chaosweep::archive {
namespace {

using h5::Dims;

h5::ElementType h5_type(ElementType t) {
  switch (t) {
    case ElementType::float64: return h5::ElementType::Float64;
    case ElementType::int64: return h5::ElementType::Int64;
    case ElementType::uint8: return h5::ElementType::UInt8;
    case ElementType::text: break;
  }
  return h5::ElementType::String;
}

std::vector<std::int64_t> iota(std::int64_t n) {
  std::vector<std::int64_t> v(static_cast<std::size_t>(n));
  for (std::int64_t i = 0; i < n; ++i) v[static_cast<std::size_t>(i)] = i;
  return v;
}

/// A group being written together with the dimension scales its datasets attach to.
class GroupWriter {
 public:
  GroupWriter(h5::File& file, const std::string& name)
      : group_(name.empty() ? file.root() : file.root().create_group(name)),
        prefix_(name.empty() ? "/" : "/" + name + "/") {}

  /// A dimension without coordinate values (one of the schema's dimensions).
  void dimension(const std::string& name, std::uint64_t size) {
    archive::dimension(name);  // throws for a dimension the schema does not define
    scales_.emplace(name, group_.create_dimension(name, size));
  }

  /// A dimension whose coordinate values are `values` (numbers, in the dimension's units).
  template <class T>
  void coordinate(const std::string& name, const std::vector<T>& values,
                  const std::string& long_name) {
    h5::Dataset d = group_.create_dataset(name, h5::element_type_of<T>(), {values.size()});
    describe(d, archive::dimension(name).units, long_name);
    d.make_scale(name);
    d.write_from_rank0(values);
    scales_.emplace(name, std::move(d));
  }

  /// A dimension whose coordinate values are names.
  void labels(const std::string& name, const std::vector<std::string>& values,
              const std::string& long_name) {
    const DimensionDef& def = archive::dimension(name);
    if (!def.labels.empty() && values != def.labels) {
      throw std::logic_error("the archive schema fixes the coordinate values of " + name);
    }
    h5::Dataset d = group_.create_dataset(name, h5::ElementType::String, {values.size()});
    describe(d, def.units, long_name);
    d.make_scale(name);
    d.write_strings_from_rank0(values);
    scales_.emplace(name, std::move(d));
  }

  /// A dimension whose coordinate values the schema fixes (`bound`: lower, upper).
  void fixed_labels(const std::string& name) {
    const DimensionDef& def = archive::dimension(name);
    labels(name, def.labels, def.long_name);
  }

  /// The `case` dimension (case indices) and, with a sweep, the swept parameters as variables
  /// on it. Every later dataset of the group with a `case` dimension names them in its CF
  /// `coordinates` attribute, so xarray reads them as coordinates of that dimension (select a
  /// case by its parameter value with swap_dims).
  void cases(const spec::Spec& spec, const plan::Plan& plan, const std::string& long_name) {
    coordinate("case", iota(static_cast<std::int64_t>(plan.cases.size())), long_name);
    std::string names;
    for (std::size_t a = 0; a < spec.sweep.size(); ++a) {
      std::vector<double> values;
      for (const plan::Case& c : plan.cases) values.push_back(c.axis_values[a]);
      dataset(spec.sweep[a].parameter, {values.size()}, kSweptParameter).write_from_rank0(values);
      names += (names.empty() ? "" : " ") + spec.sweep[a].parameter;
    }
    case_coordinates_ = names;
  }

  /// Creates the schema dataset `name` of this group with `shape`, its attributes and scales.
  h5::Dataset dataset(const std::string& name, const Dims& shape,
                      const std::string& schema_path = "") {
    const DatasetDef& def = archive::dataset(schema_path.empty() ? prefix_ + name : schema_path);
    std::optional<double> fill;
    if (def.type == ElementType::float64) fill = NAN;
    h5::Dataset d = group_.create_dataset(name, h5_type(def.type), shape, fill);
    describe(d, def.units, def.long_name);
    for (unsigned axis = 0; axis < def.dims.size(); ++axis) {
      d.attach_scale(scales_.at(def.dims[axis]), axis);
    }
    const bool on_cases = std::find(def.dims.begin(), def.dims.end(), "case") != def.dims.end();
    if (on_cases && !case_coordinates_.empty() && schema_path != kSweptParameter) {
      d.set_attribute("coordinates", case_coordinates_);
    }
    return d;
  }

 private:
  static void describe(h5::Dataset& d, const std::string& units, const std::string& long_name) {
    d.set_attribute("units", units);
    d.set_attribute("long_name", long_name);
  }

  static constexpr const char* kSweptParameter = "/case/<parameter>";

  h5::Group group_;
  std::string prefix_;
  std::map<std::string, h5::Dataset> scales_;
  std::string case_coordinates_;  // swept parameters, space-separated ("" without a sweep)
};

/// A block of member rows: cases [case0, case0 + cases) x members [member0, member0 + members),
/// starting at row `offset` of this rank's local data.
struct RowBlock {
  std::uint64_t case0 = 0, member0 = 0, cases = 0, members = 0;
  std::size_t offset = 0;
};

/// Splits this rank's contiguous range [g0, g1) of flat member indices (case * M + member)
/// into at most three rectangular blocks: the tail of a first case, whole cases, the head of
/// a last case. Every rank gets exactly three blocks (some empty), so all join each write.
std::array<RowBlock, 3> split_rows(std::int64_t g0, std::int64_t g1, std::int64_t M) {
  std::array<RowBlock, 3> blocks{};
  std::int64_t g = g0;
  if (g < g1 && g % M != 0) {
    const std::int64_t n = std::min(M - g % M, g1 - g);
    blocks[0] = {static_cast<std::uint64_t>(g / M), static_cast<std::uint64_t>(g % M), 1,
                 static_cast<std::uint64_t>(n), 0};
    g += n;
  }
  const std::int64_t full = (g1 - g) / M;
  if (full > 0) {
    blocks[1] = {static_cast<std::uint64_t>(g / M), 0, static_cast<std::uint64_t>(full),
                 static_cast<std::uint64_t>(M), static_cast<std::size_t>(g - g0)};
    g += full * M;
  }
  if (g < g1) {
    blocks[2] = {static_cast<std::uint64_t>(g / M), 0, 1, static_cast<std::uint64_t>(g1 - g),
                 static_cast<std::size_t>(g - g0)};
  }
  return blocks;
}

/// This rank's member rows, concatenated in batch order, written into a (case, member, ...)
/// dataset. `trailing` are the extents after the member dimension.
class MemberRows {
 public:
  MemberRows(const plan::Plan& plan, const std::vector<run::BatchResult>& local) {
    if (!local.empty()) {
      g0_ = local.front().case_index * plan.members + local.front().first_member;
      const run::BatchResult& last = local.back();
      g1_ = last.case_index * plan.members + last.first_member + last.count;
    }
    blocks_ = split_rows(g0_, g1_, plan.members);
  }

  template <class T>
  void write(h5::Dataset& d, const Dims& trailing, const std::vector<T>& rows) const {
    const std::size_t width = h5::element_count(trailing);
    for (const RowBlock& b : blocks_) {
      Dims start{b.case0, b.member0}, count{b.cases, b.members};
      for (std::uint64_t t : trailing) {
        start.push_back(0);
        count.push_back(t);
      }
      d.write(start, count, b.cases * b.members == 0 ? nullptr : rows.data() + b.offset * width);
    }
  }

 private:
  std::int64_t g0_ = 0, g1_ = 0;
  std::array<RowBlock, 3> blocks_{};
};

/// Concatenates one per-member field of every local batch.
template <class T>
std::vector<T> gather(const std::vector<run::BatchResult>& local,
                      std::vector<T> run::BatchResult::*field) {
  std::vector<T> out;
  for (const run::BatchResult& b : local) {
    const std::vector<T>& v = b.*field;
    out.insert(out.end(), v.begin(), v.end());
  }
  return out;
}

void write_root(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                const RunInfo& info) {
  h5::Group root = file.root();
  root.set_attribute("title", "chaosweep campaign " + spec.name);
  root.set_attribute("campaign", spec.name);
  root.set_attribute("description", spec.description);
  root.set_attribute("model", spec.model);
  root.set_attribute("tool_version", std::string(kToolVersion));
  root.set_attribute("format_version", static_cast<std::int64_t>(kArchiveFormatVersion));
  root.set_attribute("spec_yaml", spec.text);
  root.set_attribute("spec_sha256", spec.sha256);
  root.set_attribute("created_utc", info.created_utc);
  root.set_attribute("ranks", static_cast<std::int64_t>(info.ranks));
  root.set_attribute("status", info.status);
  root.set_attribute("members_per_case", plan.members);
  root.set_attribute("dt", spec.integration.dt);
  root.set_attribute("spinup", spec.integration.spinup);
  root.set_attribute("duration", spec.integration.duration);
  if (spec.schedule.kind != spec::ScheduleKind::none) {
    // the swept values of this parameter (/case/<parameter>) are offsets added to its schedule
    root.set_attribute("scheduled_parameter", spec.schedule.parameter);
  }
  GroupWriter top(file, "");
  top.labels("observable", plan.observables, "name of each observable");
}

void write_cases(h5::File& file, const spec::Spec& spec, const plan::Plan& plan) {
  GroupWriter g(file, "case");
  g.cases(spec, plan, "case index (point of the sweep grid)");
}

/// Exponent indices 1..k (the coordinate of the `exponent` dimension).
std::vector<std::int64_t> exponent_numbers(int k) {
  std::vector<std::int64_t> v(static_cast<std::size_t>(k));
  for (int i = 0; i < k; ++i) v[static_cast<std::size_t>(i)] = i + 1;
  return v;
}

void write_members(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                   const std::vector<run::BatchResult>& local) {
  GroupWriter g(file, "member");
  const std::uint64_t n_cases = plan.cases.size(), M = plan.members;
  const std::uint64_t n_obs = plan.observables.size(), n_reg = plan.regime_labels.size();
  const std::uint64_t dim = plan.state_dim;
  g.cases(spec, plan, "case index");
  g.coordinate("member", iota(plan.members), "member index within the case");
  g.labels("state", plan.state_names, "state variable");
  g.labels("observable", plan.observables, "observable");
  const MemberRows rows(plan, local);

  h5::Dataset d = g.dataset("initial_state", {n_cases, M, dim});
  rows.write(d, {dim}, gather(local, &run::BatchResult::initial_state));
  d = g.dataset("status", {n_cases, M});
  rows.write(d, {}, gather(local, &run::BatchResult::status));
  d = g.dataset("time_mean", {n_cases, M, n_obs});
  rows.write(d, {n_obs}, gather(local, &run::BatchResult::time_mean));
  d = g.dataset("time_variance", {n_cases, M, n_obs});
  rows.write(d, {n_obs}, gather(local, &run::BatchResult::time_variance));
  d = g.dataset("time_mean_stderr", {n_cases, M, n_obs});
  rows.write(d, {n_obs}, gather(local, &run::BatchResult::time_mean_stderr));
  if (spec.statistics.lyapunov.enabled) {
    const std::uint64_t k = static_cast<std::uint64_t>(spec.statistics.lyapunov.exponents);
    g.coordinate("exponent", exponent_numbers(static_cast<int>(k)), "exponent number (1 = leading)");
    d = g.dataset("lyapunov", {n_cases, M, k});
    rows.write(d, {k}, gather(local, &run::BatchResult::lyapunov));
  }
  if (spec.statistics.twins.enabled) {
    d = g.dataset("spread", {n_cases, M});
    rows.write(d, {}, gather(local, &run::BatchResult::spread));
    d = g.dataset("horizon", {n_cases, M});
    rows.write(d, {}, gather(local, &run::BatchResult::horizon));
  }
  if (n_reg == 0) return;
  g.labels("regime", plan.regime_labels, "regime label");
  d = g.dataset("regime_fraction", {n_cases, M, n_reg});
  rows.write(d, {n_reg}, gather(local, &run::BatchResult::regime_fraction));
  d = g.dataset("regime_mean_residence", {n_cases, M, n_reg});
  rows.write(d, {n_reg}, gather(local, &run::BatchResult::regime_mean_residence));
  d = g.dataset("regime_transitions", {n_cases, M});
  rows.write(d, {}, gather(local, &run::BatchResult::regime_transitions));
}

/// "case 0: reason; case 3: reason" over the flagged cases, or "none".
std::string flagged_cases(const std::vector<std::string>& reasons) {
  std::string text;
  for (std::size_t c = 0; c < reasons.size(); ++c) {
    if (reasons[c].empty()) continue;
    text += (text.empty() ? "" : " | ") + ("case " + std::to_string(c) + ": ") + reasons[c];
  }
  return text.empty() ? "none" : text;
}

void write_ensemble(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                    const parallel::EnsembleResults& e) {
  GroupWriter g(file, "ensemble");
  const std::uint64_t n_cases = plan.cases.size();
  const std::uint64_t n_obs = plan.observables.size(), n_reg = plan.regime_labels.size();
  g.cases(spec, plan, "case index");
  g.labels("observable", plan.observables, "observable");
  g.fixed_labels("bound");
  g.dataset("time_mean", {n_cases, n_obs}).write_from_rank0(e.time_mean);
  g.dataset("time_mean_std", {n_cases, n_obs}).write_from_rank0(e.time_mean_std);
  g.dataset("time_mean_ci95", {n_cases, n_obs, 2}).write_from_rank0(e.time_mean_ci95);
  g.dataset("valid_members", {n_cases}).write_from_rank0(e.valid_members);
  g.dataset("effective_members", {n_cases}).write_from_rank0(e.effective_members);
  g.dataset("time_mean_stderr", {n_cases, n_obs}).write_from_rank0(e.time_mean_stderr);
  g.dataset("effective_samples", {n_cases, n_obs}).write_from_rank0(e.effective_samples);
  g.dataset("decorrelation_time", {n_cases, n_obs}).write_from_rank0(e.decorrelation_time);
  h5::Dataset flag = g.dataset("non_chaotic", {n_cases});
  flag.write_from_rank0(e.non_chaotic);
  flag.set_attribute("reason", flagged_cases(e.non_chaotic_reason));
  g.dataset("non_chaotic_reason", {n_cases}).write_strings_from_rank0(e.non_chaotic_reason);
  if (spec.statistics.lyapunov.enabled) {
    const std::uint64_t k = static_cast<std::uint64_t>(spec.statistics.lyapunov.exponents);
    g.coordinate("exponent", exponent_numbers(static_cast<int>(k)), "exponent number (1 = leading)");
    g.dataset("lyapunov", {n_cases, k}).write_from_rank0(e.lyapunov);
    g.dataset("lyapunov_std", {n_cases, k}).write_from_rank0(e.lyapunov_std);
    g.dataset("lyapunov_ci95", {n_cases, k, 2}).write_from_rank0(e.lyapunov_ci95);
  }
  if (spec.statistics.twins.enabled) {
    g.dataset("horizon", {n_cases}).write_from_rank0(e.horizon);
    g.dataset("horizon_std", {n_cases}).write_from_rank0(e.horizon_std);
    g.dataset("horizon_ci95", {n_cases, 2}).write_from_rank0(e.horizon_ci95);
    g.dataset("horizon_reached", {n_cases}).write_from_rank0(e.horizon_reached);
  }
  if (n_reg == 0) return;
  g.labels("regime", plan.regime_labels, "regime label");
  g.dataset("regime_fraction", {n_cases, n_reg}).write_from_rank0(e.regime_fraction);
  g.dataset("regime_fraction_std", {n_cases, n_reg}).write_from_rank0(e.regime_fraction_std);
  g.dataset("regime_fraction_ci95", {n_cases, n_reg, 2}).write_from_rank0(e.regime_fraction_ci95);
}

void write_response(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                    const parallel::EnsembleResults& e) {
  if (spec.sweep.empty()) return;
  GroupWriter g(file, "response");
  std::vector<std::string> axes;
  for (const spec::SweepAxis& a : spec.sweep) axes.push_back(a.parameter);
  const std::uint64_t n_axes = axes.size(), n_obs = plan.observables.size();
  g.labels("axis", axes, "swept parameter");
  g.labels("observable", plan.observables, "observable");
  g.dataset("slope", {n_axes, n_obs}).write_from_rank0(e.slope);
  g.dataset("slope_stderr", {n_axes, n_obs}).write_from_rank0(e.slope_stderr);
}

/// The twin experiment's curves per case against lead time (statistics.twins).
void write_twins(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                 const parallel::EnsembleResults& e) {
  const run::TwinTimes& times = plan.twins;
  if (times.every_steps == 0) return;
  GroupWriter g(file, "twins");
  const std::uint64_t n_cases = plan.cases.size(), leads = static_cast<std::uint64_t>(times.leads);
  g.cases(spec, plan, "case index");
  g.coordinate("lead", run::twin_leads(times, spec.integration.dt),
               archive::dataset("/twins/lead").long_name);
  g.fixed_labels("window_edge");
  g.fixed_labels("bound");
  g.dataset("log_separation", {n_cases, leads}).write_from_rank0(e.twin_log_separation);
  g.dataset("log_separation_std", {n_cases, leads}).write_from_rank0(e.twin_log_separation_std);
  g.dataset("pairs", {n_cases}).write_from_rank0(e.twin_pairs);
  g.dataset("growth_rate", {n_cases}).write_from_rank0(e.growth_rate);
  g.dataset("growth_window", {n_cases, 2}).write_from_rank0(e.growth_window);
  g.dataset("growth_note", {n_cases}).write_strings_from_rank0(e.growth_note);
  g.dataset("horizon_median", {n_cases}).write_from_rank0(e.horizon_median);
  g.dataset("horizon_median_ci95", {n_cases, 2}).write_from_rank0(e.horizon_median_ci95);
  g.dataset("unseparated_fraction", {n_cases, leads}).write_from_rank0(e.unseparated_fraction);
  g.dataset("suggested_duration", {n_cases}).write_from_rank0(e.suggested_duration);
}

void write_histogram(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                     const parallel::EnsembleResults& e) {
  const spec::Histogram& h = spec.statistics.histogram;
  if (!h.enabled) return;
  GroupWriter g(file, "histogram");
  const std::uint64_t bins = static_cast<std::uint64_t>(h.bins);
  std::vector<double> edges(bins + 1), centres(bins);
  for (std::uint64_t k = 0; k <= bins; ++k) {
    edges[k] = stats::histogram_edge(h.low, h.high, h.bins, static_cast<int>(k));
  }
  for (std::uint64_t k = 0; k < bins; ++k) centres[k] = 0.5 * (edges[k] + edges[k + 1]);
  g.cases(spec, plan, "case index");
  g.coordinate("bin", centres, "bin centre of " + h.observable);
  g.coordinate("edges", edges, "bin edges of " + h.observable);
  g.dataset("counts", {plan.cases.size(), bins}).write_from_rank0(e.histogram);
}

void write_trajectories(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                        const std::vector<run::BatchResult>& local, double dt) {
  if (plan.trajectory_members == 0) return;
  GroupWriter g(file, "trajectory");
  const std::uint64_t samples = plan.trajectory_samples, dim = plan.state_dim;
  const std::uint64_t stored = plan.trajectory_members;
  g.cases(spec, plan, "case index");
  g.coordinate("sample", iota(plan.trajectory_members), "member index of the stored member");
  g.dimension("step", samples);
  g.labels("variable", plan.state_names, "state variable");
  std::vector<double> time(samples);
  for (std::uint64_t i = 0; i < samples; ++i) {
    time[i] = static_cast<double>(i * plan.trajectory_every_steps) * dt;
  }
  g.dataset("time", {samples}).write_from_rank0(time);
  h5::Dataset d = g.dataset("state", {plan.cases.size(), stored, samples, dim});
  // Every batch holding stored members, in plan order: its owner writes, the others join empty.
  std::map<std::int64_t, const run::BatchResult*> mine;
  for (const run::BatchResult& b : local) mine[b.batch_index] = &b;
  for (const plan::Batch& batch : plan.batches) {
    if (batch.first_member >= plan.trajectory_members) continue;
    const auto it = mine.find(batch.index);
    const run::BatchResult* b = it == mine.end() ? nullptr : it->second;
    const std::uint64_t k = b ? static_cast<std::uint64_t>(b->trajectory_members) : 0;
    d.write(Dims{static_cast<std::uint64_t>(batch.case_index),
                 static_cast<std::uint64_t>(batch.first_member), 0, 0},
            Dims{1, k, samples, dim}, b && k ? b->trajectory.data() : nullptr);
  }
}

/// Across-member statistics at the snapshot times; /snapshot/time is the `time` coordinate.
void write_snapshots(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                     const parallel::EnsembleResults& e) {
  if (plan.snapshot_count == 0) return;
  GroupWriter g(file, "snapshot");
  const std::uint64_t n_cases = plan.cases.size(), times = e.snapshot_time.size();
  const std::uint64_t n_obs = plan.observables.size(), n_reg = plan.regime_labels.size();
  g.cases(spec, plan, "case index");
  g.coordinate("time", e.snapshot_time, archive::dataset("/snapshot/time").long_name);
  g.labels("observable", plan.observables, "observable");
  g.dataset("mean", {n_cases, times, n_obs}).write_from_rank0(e.snapshot_mean);
  g.dataset("variance", {n_cases, times, n_obs}).write_from_rank0(e.snapshot_variance);
  if (n_reg == 0) return;
  g.labels("regime", plan.regime_labels, "regime label");
  g.dataset("regime_fraction", {n_cases, times, n_reg}).write_from_rank0(e.snapshot_regime_fraction);
}

}  // namespace

void write_archive(const std::string& path, const spec::Spec& spec, const plan::Plan& plan,
                   const std::vector<run::BatchResult>& local,
                   const parallel::EnsembleResults& ensemble, const RunInfo& info) {
  const std::string partial = path + ".partial";
  h5::File file = h5::File::create_parallel(partial, MPI_COMM_WORLD, kSealBytes);
  write_root(file, spec, plan, info);
  write_cases(file, spec, plan);
  write_members(file, spec, plan, local);
  write_ensemble(file, spec, plan, ensemble);
  write_response(file, spec, plan, ensemble);
  write_twins(file, spec, plan, ensemble);
  write_histogram(file, spec, plan, ensemble);
  write_trajectories(file, spec, plan, local, spec.integration.dt);
  write_snapshots(file, spec, plan, ensemble);
  file.close();

  // Rank 0 seals the complete file (header with its checksum, synced to disk) and renames it
  // into place, then syncs the directory; every rank learns the outcome.
  const parallel::Communicator comm;
  std::string failure;
  if (comm.rank() == 0) {
    try {
      seal_file(partial);
      if (std::rename(partial.c_str(), path.c_str()) != 0) {
        failure = "cannot rename " + partial + " to " + path + ": " + std::strerror(errno);
      } else {
        const std::filesystem::path dir = std::filesystem::path(path).parent_path();
        checkpoint::sync_directory(dir.empty() ? "." : dir.string());
      }
    } catch (const Error& e) {
      failure = e.what();
    }
  }
  failure = comm.broadcast(failure);
  if (!failure.empty()) throw IoError(failure);
}

}  // namespace chaosweep::archive
