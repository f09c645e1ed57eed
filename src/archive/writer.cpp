// Collective archive writer (see writer.hpp). Layout: the table of results
// (results/table.hpp): every group holds the present quantities the table puts in it, in table
// order, with their dimensions, units and long names; each dimension's scale is created, from
// the plan, when the first dataset of the group needs it.
#include "archive/writer.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <map>
#include <stdexcept>

#include "archive/identity.hpp"
#include "archive/seal.hpp"
#include "checkpoint/files.hpp"
#include "core/error.hpp"
#include "core/version.hpp"
#include "h5/h5.hpp"
#include "parallel/communicator.hpp"
#include "results/table.hpp"
#include "run/twins.hpp"
#include "stats/histogram.hpp"

namespace chaosweep::archive {
namespace {

using h5::Dims;
using results::ElementType;
using results::Quantity;

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
    results::dimension(name);  // throws for a dimension the table does not define
    scales_.emplace(name, group_.create_dimension(name, size));
  }

  /// A dimension whose coordinate values are `values` (numbers, in the dimension's units).
  template <class T>
  void coordinate(const std::string& name, const std::vector<T>& values,
                  const std::string& long_name) {
    h5::Dataset d = group_.create_dataset(name, h5::element_type_of<T>(), {values.size()});
    describe(d, results::dimension(name).units, long_name);
    d.make_scale(name);
    d.write_from_rank0(values);
    scales_.emplace(name, std::move(d));
  }

  /// A dimension whose coordinate values are names.
  void labels(const std::string& name, const std::vector<std::string>& values,
              const std::string& long_name) {
    const results::Dimension& def = results::dimension(name);
    if (!def.labels.empty() && values != def.labels) {
      throw std::logic_error("the results table fixes the coordinate values of " + name);
    }
    h5::Dataset d = group_.create_dataset(name, h5::ElementType::String, {values.size()});
    describe(d, def.units, long_name);
    d.make_scale(name);
    d.write_strings_from_rank0(values);
    scales_.emplace(name, std::move(d));
  }

  /// A dimension whose coordinate values the table fixes (`bound`: lower, upper).
  void fixed_labels(const std::string& name) {
    const results::Dimension& def = results::dimension(name);
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

  bool has_scale(const std::string& dim) const { return scales_.count(dim) > 0; }

  /// Creates the table's dataset `name` of this group with `shape`, its attributes and scales.
  h5::Dataset dataset(const std::string& name, const Dims& shape,
                      const std::string& schema_path = "", const h5::Storage& storage = {}) {
    const Quantity& def = results::at_path(schema_path.empty() ? prefix_ + name : schema_path);
    std::optional<double> fill;
    if (def.type == ElementType::float64) fill = NAN;
    h5::Dataset d = group_.create_dataset(name, h5_type(def.type), shape, fill, storage);
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

/// Members of batch `b` that the archive keeps: the first plan.archived_members of each case.
int kept_rows(const plan::Plan& plan, const run::BatchResult& b) {
  const std::int64_t kept = plan.archived_members - b.first_member;
  return static_cast<int>(std::clamp<std::int64_t>(kept, 0, b.count));
}

/// This rank's kept member rows, concatenated in batch order, written into a (case, member, ...)
/// dataset of plan.archived_members members per case. `trailing` are the extents after the
/// member dimension. A rank's batches are consecutive, so its kept rows are one contiguous
/// range of flat indices case * archived_members + member.
class MemberRows {
 public:
  MemberRows(const plan::Plan& plan, const std::vector<run::BatchResult>& local) {
    const std::int64_t M = plan.archived_members;
    bool first = true;
    for (const run::BatchResult& b : local) {
      const int kept = kept_rows(plan, b);
      if (kept == 0) continue;
      if (first) g0_ = b.case_index * M + b.first_member;
      first = false;
      g1_ = b.case_index * M + b.first_member + kept;
    }
    if (M > 0) blocks_ = split_rows(g0_, g1_, M);
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

/// Concatenates the kept rows of one per-member array of every local batch; `width` values
/// per row, into `out` (whose memory is reused from one quantity to the next: allocating
/// anew costs a page fault per 4 KiB). A batch holds at least its kept rows (all of its
/// members' before it is summarised, parallel/batch_summary.hpp, only the kept ones after).
template <class T>
const std::vector<T>& gather(const plan::Plan& plan, const std::vector<run::BatchResult>& local,
                             const Quantity& q, std::size_t width, std::vector<T>& out) {
  out.clear();
  std::size_t total = 0;
  for (const run::BatchResult& b : local) total += width * static_cast<std::size_t>(kept_rows(plan, b));
  out.reserve(total);
  for (const run::BatchResult& b : local) {
    const std::vector<T>& v = results::array_of<T>(b, q);
    const std::size_t kept = width * static_cast<std::size_t>(kept_rows(plan, b));
    if (v.size() < kept) {
      throw Error("batch " + std::to_string(b.batch_index) + " lacks member rows of " + q.name);
    }
    out.insert(out.end(), v.begin(), v.begin() + static_cast<std::ptrdiff_t>(kept));
  }
  return out;
}

/// The stochastic methods and the noise, as root attributes (absent for RK4 without noise).
void write_method_and_noise(h5::Group& root, const spec::Spec& spec) {
  const std::string& method = spec.integration.method;
  if (method == "rk4") return;
  root.set_attribute("integration_method", method);
  const spec::Noise& noise = spec.noise;
  if (noise.kind == spec::NoiseKind::none) return;
  root.set_attribute("noise_kind", std::string(spec::noise_kind_name(noise.kind)));
  if (noise.kind == spec::NoiseKind::red) {  // a smooth forcing: no stochastic calculus
    root.set_attribute("noise_correlation_time", noise.correlation_time);
  } else {
    root.set_attribute("noise_calculus", std::string(spec::noise_calculus(method)));
  }
  const bool scheduled = spec.schedule.kind != spec::ScheduleKind::none &&
                         spec.schedule.parameter == spec::kNoiseAmplitudeAxis;
  if (!noise.amplitude_swept && !scheduled) root.set_attribute("noise_amplitude", noise.amplitude);
  std::string variables;
  for (const std::string& name : noise.variable_names) {
    variables += (variables.empty() ? "" : " ") + name;
  }
  root.set_attribute("noise_variables", variables);
  root.set_attribute("noise_realisation", std::string(noise.shared ? "shared" : "per-member"));
}

void write_root(h5::File& file, const spec::Spec& spec, const plan::Plan& plan,
                const RunInfo& info) {
  h5::Group root = file.root();
  root.set_attribute("title", "chaosweep campaign " + spec.name);
  root.set_attribute("description", spec.description);
  write_identity(root, spec, info);
  if (info.parts > 0) root.set_attribute("parts", static_cast<std::int64_t>(info.parts));
  root.set_attribute("members_per_case", plan.members);
  if (spec.ensemble.pair_with_case >= 0) {
    root.set_attribute("paired_with_case", spec.ensemble.pair_with_case);
  }
  if (plan.pair_groups > 0) {
    root.set_attribute("pair_groups", static_cast<std::int64_t>(plan.pair_groups));
  }
  root.set_attribute("dt", spec.integration.dt);
  root.set_attribute("spinup", spec.integration.spinup);
  root.set_attribute("duration", spec.integration.duration);
  if (spec.schedule.kind != spec::ScheduleKind::none) {
    // the swept values of this parameter (/case/<parameter>) are offsets added to its schedule
    root.set_attribute("scheduled_parameter", spec.schedule.parameter);
  }
  write_method_and_noise(root, spec);
  const spec::Response& response = spec.statistics.response;
  if (response.enabled) {
    root.set_attribute("response_every", response.every);
    root.set_attribute("response_max_lag", response.max_lag);
    root.set_attribute("response_groups", static_cast<std::int64_t>(plan.response_groups));
  }
}

/// Exponent indices 1..k (the coordinate of the `exponent` dimension).
std::vector<std::int64_t> exponent_numbers(int k) {
  std::vector<std::int64_t> v(static_cast<std::size_t>(k));
  for (int i = 0; i < k; ++i) v[static_cast<std::size_t>(i)] = i + 1;
  return v;
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

/// Everything a group's datasets are written from.
struct Sources {
  const spec::Spec& spec;
  const plan::Plan& plan;
  const std::vector<run::BatchResult>& local;
  const parallel::EnsembleResults& ensemble;
  const MemberRows& rows;
  /// Room for this rank's rows of one quantity, reused.
  struct Buffers {
    std::vector<double> float64;
    std::vector<std::int64_t> int64;
    std::vector<std::uint8_t> uint8;
  } mutable buffers;
};

/// Creates the scale of dimension `dim` in group `group`, with its coordinate values from the
/// plan. Its long name is the table's dimension's, or that of the group's own dataset of the
/// same name where the table has one (/twins/lead, /snapshot/time).
void make_scale(GroupWriter& g, const std::string& group, const std::string& dim,
                const Sources& in) {
  const plan::Plan& plan = in.plan;
  const std::string& long_name = results::dimension(dim).long_name;
  const auto own_name = [&] { return results::at_path("/" + group + "/" + dim).long_name; };
  if (dim == "case") {
    g.cases(in.spec, plan, group == "case" ? own_name() : long_name);
  } else if (dim == "member") {
    g.coordinate(dim, iota(plan.archived_members), long_name);
  } else if (dim == "sample") {
    g.coordinate(dim, iota(plan.trajectory_members), long_name);
  } else if (dim == "state" || dim == "variable") {
    g.labels(dim, plan.state_names, long_name);
  } else if (dim == "observable") {
    g.labels(dim, plan.observables, group.empty() ? results::at_path("/observable").long_name
                                                  : long_name);
  } else if (dim == "regime") {
    g.labels(dim, plan.regime_labels, long_name);
  } else if (dim == "bound" || dim == "window_edge") {
    g.fixed_labels(dim);
  } else if (dim == "exponent") {
    g.coordinate(dim, exponent_numbers(plan.lyapunov_exponents), long_name);
  } else if (dim == "axis") {
    std::vector<std::string> axes;
    for (const spec::SweepAxis& a : in.spec.sweep) axes.push_back(a.parameter);
    g.labels(dim, axes, long_name);
  } else if (dim == "forcing_parameter") {
    g.labels(dim, plan.forcings, long_name);
  } else if (dim == "lead") {
    g.coordinate(dim, run::twin_leads(plan.twins, in.spec.integration.dt), own_name());
  } else if (dim == "time") {
    g.coordinate(dim, in.ensemble.snapshot_time, own_name());
  } else if (dim == "bin" || dim == "edges") {
    const spec::Histogram& h = in.spec.statistics.histogram;
    std::vector<double> edges(static_cast<std::size_t>(h.bins) + 1), centres;
    for (int k = 0; k <= h.bins; ++k) {
      edges[static_cast<std::size_t>(k)] = stats::histogram_edge(h.low, h.high, h.bins, k);
    }
    for (int k = 0; k < h.bins; ++k) centres.push_back(0.5 * (edges[k] + edges[k + 1]));
    if (dim == "bin") g.coordinate(dim, centres, "bin centre of " + h.observable);
    else g.coordinate(dim, edges, "bin edges of " + h.observable);
  } else if (dim == "step") {
    g.dimension(dim, plan.trajectory_samples);
  } else {
    throw std::logic_error("no coordinate values for dimension " + dim);
  }
}

/// The stored trajectories (/trajectory/state): every batch holding stored members, in plan
/// order; its owner writes, the others join the collective write empty.
void write_trajectories(h5::Dataset& d, const Sources& in) {
  const std::uint64_t samples = in.plan.trajectory_samples, dim = in.plan.state_dim;
  std::map<std::int64_t, const run::BatchResult*> mine;
  for (const run::BatchResult& b : in.local) mine[b.batch_index] = &b;
  for (std::int64_t index = 0; index < in.plan.batch_count(); ++index) {
    const plan::Batch batch = in.plan.batch(index);
    if (batch.first_member >= in.plan.trajectory_members) continue;
    const auto it = mine.find(batch.index);
    const run::BatchResult* b = it == mine.end() ? nullptr : it->second;
    const std::uint64_t k = b ? static_cast<std::uint64_t>(b->trajectory_members) : 0;
    d.write(Dims{static_cast<std::uint64_t>(batch.case_index),
                 static_cast<std::uint64_t>(batch.first_member), 0, 0},
            Dims{1, k, samples, dim}, b && k ? b->trajectory.data() : nullptr);
  }
}

/// Writes an ensemble array, the same on every rank, from rank 0.
template <class T>
void write_whole(h5::Dataset& d, const Quantity& q, const Dims& shape, const std::vector<T>& v) {
  if (v.size() != h5::element_count(shape)) {
    throw std::logic_error("results: " + q.path + " holds " + std::to_string(v.size()) +
                           " values, its dimensions " + std::to_string(h5::element_count(shape)));
  }
  if constexpr (std::is_same_v<T, std::string>) {
    d.write_strings_from_rank0(v);
  } else {
    d.write_from_rank0(v);
  }
}

/// Bytes of one chunk of a per-member or trajectory dataset, at most (common practice for
/// chunked HDF5 data read whole: chunks of about a megabyte).
constexpr std::uint64_t kChunkBytes = 1u << 20;

/// Per-member and trajectory datasets are stored in chunks of one case and about kChunkBytes
/// of consecutive members (whole rows while they fit), deflated at output.compression's level
/// after shuffling; the other datasets are small and contiguous.
h5::Storage storage_of(const Quantity& q, const Dims& shape, const spec::Spec& spec) {
  const bool rows = q.scope == results::Scope::member || q.scope == results::Scope::batch;
  if (!rows || shape.size() < 2 || h5::element_count(shape) == 0) return {};
  const std::uint64_t element = q.type == ElementType::uint8 ? 1 : 8;
  h5::Storage storage;
  storage.chunk = shape;
  storage.chunk[0] = 1;
  for (std::size_t d = 1; d < shape.size(); ++d) {
    std::uint64_t rest = element;
    for (std::size_t e = d + 1; e < shape.size(); ++e) rest *= storage.chunk[e];
    if (rest * storage.chunk[d] <= kChunkBytes) break;
    // as many chunks as needed, of equal extent, so that the last is not mostly empty
    const std::uint64_t most = std::max<std::uint64_t>(1, kChunkBytes / rest);
    const std::uint64_t chunks = (shape[d] + most - 1) / most;
    storage.chunk[d] = (shape[d] + chunks - 1) / chunks;
  }
  storage.deflate = spec.output.compression;
  return storage;
}

/// Writes one quantity of the table into its group (its scales already exist).
void write_quantity(GroupWriter& g, const Quantity& q, const Sources& in) {
  const bool own_scale = q.dims.size() == 1 && q.dims[0] == q.leaf();
  if (q.scope == results::Scope::coordinate || (q.scope == results::Scope::ensemble && own_scale)) {
    if (q.path != "/trajectory/time") return;  // the scales and /case/<parameter> exist
    const std::uint64_t samples = in.plan.trajectory_samples;
    std::vector<double> time(samples);
    for (std::uint64_t i = 0; i < samples; ++i) {
      time[i] = static_cast<double>(i * in.plan.trajectory_every_steps) * in.spec.integration.dt;
    }
    g.dataset(q.leaf(), {samples}).write_from_rank0(time);
    return;
  }
  Dims shape;
  for (const std::string& dim : q.dims) {
    shape.push_back(dim == "member" ? static_cast<std::uint64_t>(in.plan.archived_members)
                                    : in.plan.extent(dim));
  }
  h5::Dataset d = g.dataset(q.leaf(), shape, "", storage_of(q, shape, in.spec));
  switch (q.scope) {
    case results::Scope::member: {
      const Dims trailing(shape.begin() + 2, shape.end());
      const std::size_t width = h5::element_count(trailing);
      switch (q.type) {
        case ElementType::float64: in.rows.write(d, trailing, gather(in.plan, in.local, q, width, in.buffers.float64)); break;
        case ElementType::int64: in.rows.write(d, trailing, gather(in.plan, in.local, q, width, in.buffers.int64)); break;
        case ElementType::uint8: in.rows.write(d, trailing, gather(in.plan, in.local, q, width, in.buffers.uint8)); break;
        case ElementType::text: throw std::logic_error("text per member: " + q.path);
      }
      break;
    }
    case results::Scope::batch:
      write_trajectories(d, in);
      break;
    case results::Scope::ensemble:
      switch (q.type) {
        case ElementType::float64: write_whole(d, q, shape, results::array_of<double>(in.ensemble, q)); break;
        case ElementType::int64: write_whole(d, q, shape, results::array_of<std::int64_t>(in.ensemble, q)); break;
        case ElementType::uint8: write_whole(d, q, shape, results::array_of<std::uint8_t>(in.ensemble, q)); break;
        case ElementType::text: write_whole(d, q, shape, results::array_of<std::string>(in.ensemble, q)); break;
      }
      if (q.path == "/ensemble/non_chaotic") {
        d.set_attribute("reason", flagged_cases(in.ensemble.non_chaotic_reason));
      }
      break;
    case results::Scope::coordinate: break;
  }
}

/// Whether the archive holds `q`: archived, switched on, and for a per-member quantity only
/// when output.members keeps some members.
bool written(const Quantity& q, const plan::Plan& plan) {
  if (!q.archived() || !q.present(plan.outputs)) return false;
  return q.scope != results::Scope::member || plan.archived_members > 0;
}

/// Every group of the table that has a written quantity, in table order, with its quantities.
void write_groups(h5::File& file, const Sources& in) {
  std::vector<std::string> groups;
  for (const Quantity& q : results::quantities()) {
    if (!written(q, in.plan)) continue;
    if (std::find(groups.begin(), groups.end(), q.group()) == groups.end()) {
      groups.push_back(q.group());
    }
  }
  for (const std::string& group : groups) {
    GroupWriter g(file, group);
    for (const Quantity& q : results::quantities()) {
      if (q.group() != group || !written(q, in.plan)) continue;
      for (const std::string& dim : q.dims) {
        if (!g.has_scale(dim)) make_scale(g, group, dim, in);
      }
      write_quantity(g, q, in);
    }
  }
}

}  // namespace

void write_identity(h5::Group& root, const spec::Spec& spec, const RunInfo& info) {
  root.set_attribute("campaign", spec.name);
  root.set_attribute("model", spec.model);
  root.set_attribute("tool_version", std::string(kToolVersion));
  root.set_attribute("format_version", static_cast<std::int64_t>(kArchiveFormatVersion));
  root.set_attribute("spec_yaml", spec.text);
  root.set_attribute("spec_sha256", spec.sha256);
  root.set_attribute("created_utc", info.created_utc);
  root.set_attribute("ranks", static_cast<std::int64_t>(info.ranks));
  root.set_attribute("status", info.status);
}

void write_archive(const std::string& path, const spec::Spec& spec, const plan::Plan& plan,
                   const std::vector<run::BatchResult>& local,
                   const parallel::EnsembleResults& ensemble, const RunInfo& info) {
  const std::string partial = path + ".partial";
  h5::File file = h5::File::create_parallel(partial, MPI_COMM_WORLD, kSealBytes);
  write_root(file, spec, plan, info);
  const MemberRows rows(plan, local);
  write_groups(file, Sources{spec, plan, local, ensemble, rows, {}});
  file.close();
  seal_into_place(partial, path);
}

void seal_into_place(const std::string& partial, const std::string& path) {
  // Rank 0 seals the complete file (header with its checksum, synced to disk) and renames it
  // into place, then syncs the directory; every rank learns the outcome. While rank 0 reads
  // the file back for its checksum, rank 1 (when there is one) already flushes it to disk, so
  // that rank 0's final sync has little left to do.
  const parallel::Communicator comm;
  std::string failure, header;
  if (comm.rank() == 0) {
    try {
      header = seal_header(partial);
    } catch (const Error& e) {
      failure = e.what();
    }
  } else if (comm.rank() == 1) {
    try {
      checkpoint::sync_file(partial);
    } catch (const Error& e) {
      failure = e.what();
    }
  }
  // (a write-back error is reported to one sync only: rank 1's counts before the rename)
  if (comm.any(!failure.empty())) {
    const std::string first = comm.broadcast(failure);
    throw IoError(!failure.empty() ? failure : !first.empty() ? first
                                                              : "cannot sync " + partial);
  }
  if (comm.rank() == 0) {
    try {
      write_seal(partial, header);
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
