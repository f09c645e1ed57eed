// Part archives of a campaign run as several jobs (see part.hpp).
#include "archive/part.hpp"

#include <algorithm>
#include <filesystem>
#include <stdexcept>

#include "archive/identity.hpp"
#include "archive/seal.hpp"
#include "core/error.hpp"
#include "core/version.hpp"
#include "h5/h5.hpp"
#include "parallel/communicator.hpp"
#include "results/table.hpp"

namespace chaosweep::archive {
namespace {

using h5::Dims;
using results::ElementType;
using results::Quantity;

/// Marks a part archive (root attribute `part_of`).
constexpr const char* kPartOf = "chaosweep campaign";

/// The per-member quantities the campaign's archive holds (as the writer decides).
std::vector<const Quantity*> member_quantities(const plan::Plan& plan) {
  std::vector<const Quantity*> out;
  if (plan.archived_members <= 0) return out;
  for (const Quantity& q : results::quantities()) {
    if (q.scope == results::Scope::member && q.archived() && q.present(plan.outputs)) {
      out.push_back(&q);
    }
  }
  return out;
}

/// The stored-trajectory quantity, when the campaign stores trajectories.
const Quantity* trajectory_quantity(const plan::Plan& plan) {
  if (plan.trajectory_members <= 0) return nullptr;
  for (const Quantity& q : results::quantities()) {
    if (q.scope == results::Scope::batch && q.archived() && q.present(plan.outputs)) return &q;
  }
  return nullptr;
}

/// The extents after the (case, member) dimensions of `q`.
Dims trailing(const plan::Plan& plan, const Quantity& q) {
  Dims t;
  for (std::size_t d = 2; d < q.dims.size(); ++d) t.push_back(plan.extent(q.dims[d]));
  return t;
}

/// Rows kept before batch `b` (0 <= b <= batch_count) when each case keeps its first
/// `per_case` members: case * per_case + min(position * batch_size, per_case).
std::int64_t rows_before(const plan::Plan& plan, std::int64_t b, std::int64_t per_case) {
  const std::int64_t p = plan.batches_per_case();
  if (p <= 0 || per_case <= 0) return 0;
  return b / p * per_case + std::min<std::int64_t>(b % p * plan.batch_size, per_case);
}

/// Rows of batch `b` among the first `per_case` members of its case.
int rows_of(const plan::Batch& b, std::int64_t per_case) {
  return static_cast<int>(std::clamp<std::int64_t>(per_case - b.first_member, 0, b.count));
}

/// Collective write of this rank's rows of one quantity into `/rows/<name>` of the part:
/// `rows` concatenated in batch order, starting at part row `offset`.
template <class T>
void write_rows(h5::Group& group, const std::string& name, std::int64_t part_rows,
                const Dims& tail, std::int64_t offset, const std::vector<T>& rows) {
  Dims shape{static_cast<std::uint64_t>(part_rows)};
  shape.insert(shape.end(), tail.begin(), tail.end());
  h5::Dataset d = group.create_dataset(name, h5::element_type_of<T>(), shape);
  const std::size_t width = h5::element_count(tail);
  const std::uint64_t n = width == 0 ? 0 : rows.size() / width;
  Dims start(shape.size(), 0), count{n};
  start[0] = static_cast<std::uint64_t>(offset);
  count.insert(count.end(), tail.begin(), tail.end());
  d.write(start, count, n == 0 ? nullptr : rows.data());
}

template <class T>
void write_member_rows(h5::Group& group, const plan::Plan& plan, const PartRange& part,
                       const std::vector<run::BatchResult>& local, const Quantity& q) {
  const std::int64_t M = plan.archived_members;
  const Dims tail = trailing(plan, q);
  const std::size_t width = h5::element_count(tail);
  std::vector<T> rows;
  std::int64_t offset = -1;
  for (const run::BatchResult& b : local) {
    const int kept = static_cast<int>(std::clamp<std::int64_t>(M - b.first_member, 0, b.count));
    if (kept == 0) continue;
    if (offset < 0) offset = rows_before(plan, b.batch_index, M) - rows_before(plan, part.first_batch, M);
    const std::vector<T>& v = results::array_of<T>(b, q);
    if (v.size() < kept * width) {
      throw Error("batch " + std::to_string(b.batch_index) + " lacks member rows of " + q.name);
    }
    rows.insert(rows.end(), v.begin(), v.begin() + static_cast<std::ptrdiff_t>(kept * width));
  }
  const std::int64_t total = rows_before(plan, part.end_batch, M) - rows_before(plan, part.first_batch, M);
  write_rows(group, q.name, total, tail, std::max<std::int64_t>(offset, 0), rows);
}

void write_trajectory_rows(h5::Group& group, const plan::Plan& plan, const PartRange& part,
                           const std::vector<run::BatchResult>& local, const Quantity& q) {
  const std::int64_t T = plan.trajectory_members;
  const Dims tail = trailing(plan, q);
  std::vector<double> rows;
  std::int64_t offset = -1;
  for (const run::BatchResult& b : local) {
    if (b.trajectory_members == 0) continue;
    if (offset < 0) offset = rows_before(plan, b.batch_index, T) - rows_before(plan, part.first_batch, T);
    rows.insert(rows.end(), b.trajectory.begin(), b.trajectory.end());
  }
  const std::int64_t total = rows_before(plan, part.end_batch, T) - rows_before(plan, part.first_batch, T);
  write_rows(group, "trajectory", total, tail, std::max<std::int64_t>(offset, 0), rows);
}

/// Reads `/rows/<name>` of a part whole, checking its row count and row width.
template <class T>
std::vector<T> read_rows(const h5::Group& root, const std::string& path, const std::string& name,
                         std::int64_t rows, std::size_t width) {
  if (!root.has_dataset("rows/" + name)) {
    throw UsageError(path + ": part archive is inconsistent (no /rows/" + name + ")");
  }
  std::vector<T> v = root.open_dataset("rows/" + name).read<T>().values;
  if (v.size() != static_cast<std::size_t>(rows) * width) {
    throw UsageError(path + ": part archive is inconsistent (/rows/" + name + " holds " +
                     std::to_string(v.size()) + " values, its batches " +
                     std::to_string(static_cast<std::size_t>(rows) * width) + ")");
  }
  return v;
}

template <class F>
auto reading(const std::string& path, F&& f) {
  try {
    return f();
  } catch (const UsageError&) {
    throw;
  } catch (const Error& e) {
    throw UsageError(path + ": not a readable part archive: " + e.what());
  }
}

}  // namespace

PartRange part_range(const plan::Plan& plan, int index, int count) {
  const plan::Range r = plan::share(plan.batch_count(), index - 1, count);
  return PartRange{index, count, r.first, r.last};
}

void write_part(const std::string& path, const spec::Spec& spec, const plan::Plan& plan,
                const PartRange& part, const std::vector<run::BatchResult>& local,
                const std::vector<double>& nodes, const std::vector<std::int64_t>& counts,
                const RunInfo& info) {
  const std::string partial = path + ".partial";
  h5::File file = h5::File::create_parallel(partial, MPI_COMM_WORLD, kSealBytes);
  {
    h5::Group root = file.root();
    root.set_attribute("title", "chaosweep campaign " + spec.name + ", part " +
                                    std::to_string(part.index) + " of " +
                                    std::to_string(part.count));
    root.set_attribute("part_of", kPartOf);
    root.set_attribute("part", static_cast<std::int64_t>(part.index));
    root.set_attribute("parts", static_cast<std::int64_t>(part.count));
    root.set_attribute("first_batch", part.first_batch);
    root.set_attribute("end_batch", part.end_batch);
    write_identity(root, spec, info);

    h5::Group merge = root.create_group("merge");
    merge.create_dataset("nodes", h5::ElementType::Float64, {nodes.size()}).write_from_rank0(nodes);
    merge.create_dataset("counts", h5::ElementType::Int64, {counts.size()})
        .write_from_rank0(counts);

    h5::Group rows = root.create_group("rows");
    for (const Quantity* q : member_quantities(plan)) {
      switch (q->type) {
        case ElementType::float64: write_member_rows<double>(rows, plan, part, local, *q); break;
        case ElementType::int64: write_member_rows<std::int64_t>(rows, plan, part, local, *q); break;
        case ElementType::uint8: write_member_rows<std::uint8_t>(rows, plan, part, local, *q); break;
        case ElementType::text: throw std::logic_error("text per member: " + q->path);
      }
    }
    if (const Quantity* q = trajectory_quantity(plan)) {
      write_trajectory_rows(rows, plan, part, local, *q);
    }
  }
  file.close();
  seal_into_place(partial, path);
}

PartIdentity read_part_identity(const std::string& path, bool verify) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) throw UsageError(path + ": no such part archive");
  if (verify) verify_seal(path, "run that part again (`chaosweep run SPEC --part I/N --overwrite`)");
  return reading(path, [&] {
    const h5::File file = h5::File::open_read(path);
    const h5::Group root = file.root();
    if (!root.has_attribute("part_of")) {
      if (root.has_attribute("spec_sha256")) {
        throw UsageError(path + ": the archive of a whole campaign, not a part of one "
                                "(`chaosweep run SPEC --part I/N` writes parts)");
      }
      throw UsageError(path + ": not a part archive of chaosweep");
    }
    const std::int64_t format = root.int64_attribute("format_version");
    if (format > kArchiveFormatVersion) {
      throw UsageError(path + ": part archive format version " + std::to_string(format) +
                       " is newer than this chaosweep understands (" +
                       std::to_string(kArchiveFormatVersion) + "); use a newer chaosweep");
    }
    PartIdentity id;
    id.path = path;
    id.part.index = static_cast<int>(root.int64_attribute("part"));
    id.part.count = static_cast<int>(root.int64_attribute("parts"));
    id.part.first_batch = root.int64_attribute("first_batch");
    id.part.end_batch = root.int64_attribute("end_batch");
    id.spec_yaml = root.string_attribute("spec_yaml");
    id.spec_sha256 = root.string_attribute("spec_sha256");
    id.tool_version = root.string_attribute("tool_version");
    id.created_utc = root.string_attribute("created_utc");
    id.ranks = root.int64_attribute("ranks");
    if (root.string_attribute("status") != "complete") {
      throw UsageError(path + ": part archive is not complete (status " +
                       root.string_attribute("status") + ")");
    }
    return id;
  });
}

void read_part_partial(const std::string& path, std::size_t nodes_size, std::size_t counts_size,
                       std::vector<double>& nodes, std::vector<std::int64_t>& counts) {
  reading(path, [&] {
    const h5::File file = h5::File::open_read(path);
    const h5::Group root = file.root();
    nodes = root.open_dataset("merge/nodes").read<double>().values;
    counts = root.open_dataset("merge/counts").read<std::int64_t>().values;
    return 0;
  });
  if (nodes.size() != nodes_size || counts.size() != counts_size) {
    throw UsageError(path + ": part archive is inconsistent (its merge nodes or counts do not "
                            "fit the campaign's plan)");
  }
}

std::vector<run::BatchResult> read_part_rows(const std::string& path, const plan::Plan& plan,
                                             const PartRange& part) {
  const std::int64_t M = plan.archived_members, T = plan.trajectory_members;
  const std::vector<const Quantity*> quantities = member_quantities(plan);
  const Quantity* trajectory = trajectory_quantity(plan);
  if (quantities.empty() && trajectory == nullptr) return {};

  // The batches with rows, in order, each with its place among the part's rows.
  std::vector<run::BatchResult> out;
  const std::int64_t per_case = plan.batches_per_case();
  const std::int64_t reach = std::max(quantities.empty() ? 0 : M, trajectory ? T : 0);
  for (std::int64_t index = part.first_batch; index < part.end_batch; ++index) {
    if (index % per_case * plan.batch_size >= reach) {  // no rows in the rest of this case
      index = (index / per_case + 1) * per_case - 1;
      continue;
    }
    const plan::Batch b = plan.batch(index);
    run::BatchResult r;
    r.batch_index = b.index;
    r.case_index = b.case_index;
    r.first_member = b.first_member;
    r.count = b.count;
    r.trajectory_members = trajectory ? rows_of(b, T) : 0;
    out.push_back(std::move(r));
  }

  reading(path, [&] {
    const h5::File file = h5::File::open_read(path);
    const h5::Group root = file.root();
    const std::int64_t base = rows_before(plan, part.first_batch, M);
    const std::int64_t total = rows_before(plan, part.end_batch, M) - base;
    for (const Quantity* q : quantities) {
      const std::size_t width = h5::element_count(trailing(plan, *q));
      const auto place = [&](const auto& all) {
        using T = typename std::decay_t<decltype(all)>::value_type;
        for (run::BatchResult& r : out) {
          const std::int64_t kept = rows_of(plan.batch(r.batch_index), M);
          const std::int64_t at = rows_before(plan, r.batch_index, M) - base;
          const auto from = all.begin() + static_cast<std::ptrdiff_t>(at * width);
          results::array_of<T>(r, *q).assign(from, from + static_cast<std::ptrdiff_t>(kept * width));
        }
      };
      switch (q->type) {
        case ElementType::float64: place(read_rows<double>(root, path, q->name, total, width)); break;
        case ElementType::int64: place(read_rows<std::int64_t>(root, path, q->name, total, width)); break;
        case ElementType::uint8: place(read_rows<std::uint8_t>(root, path, q->name, total, width)); break;
        case ElementType::text: throw std::logic_error("text per member: " + q->path);
      }
    }
    if (trajectory != nullptr) {
      const std::size_t width = h5::element_count(trailing(plan, *trajectory));
      const std::int64_t first = rows_before(plan, part.first_batch, T);
      const std::vector<double> all = read_rows<double>(
          root, path, "trajectory", rows_before(plan, part.end_batch, T) - first, width);
      for (run::BatchResult& r : out) {
        const auto from =
            all.begin() + static_cast<std::ptrdiff_t>((rows_before(plan, r.batch_index, T) - first) * width);
        r.trajectory.assign(from, from + static_cast<std::ptrdiff_t>(r.trajectory_members * width));
      }
    }
    return 0;
  });
  return out;
}

}  // namespace chaosweep::archive
