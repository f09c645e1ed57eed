// The table of results: every quantity the campaign produces is declared here once, with its
// archive path, dimensions, element type, units, long name, scope, how it is merged across
// members and batches, when it is present, and the array that holds it in a BatchResult or in
// EnsembleResults. The checkpoint record, the reduction, the archive writer and reader, the
// summary and docs/archive.md iterate this table instead of naming quantities one by one.
// Pure: no MPI, no HDF5, no YAML.
//
// Units: every model is non-dimensional. State variables, observables and parameters are in
// the model's own scale (units "1"); time is in the model's own time unit, kModelTime, and
// rates are per that unit, kPerModelTime.
#pragma once

#include <cstdint>
#include <string>
#include <type_traits>
#include <variant>
#include <vector>

#include "results/batch_result.hpp"
#include "results/ensemble_results.hpp"

namespace chaosweep::results {

enum class ElementType { float64, int64, uint8, text };

/// Units of a time in the model's own (non-dimensional) time unit, and of a rate per that unit.
inline constexpr const char* kModelTime = "model_time_unit";
inline constexpr const char* kPerModelTime = "1/model_time_unit";

/// Where a quantity lives.
enum class Scope {
  coordinate,  // an archive coordinate, written from the plan
  member,      // a BatchResult row per member, [count][...]
  batch,       // a BatchResult partial summary of the whole batch
  ensemble,    // an EnsembleResults array, the same on every rank
};

/// How a quantity is merged across members and batches.
enum class Merge {
  none,            // coordinates: from the plan
  rows,            // per member, placed by (case, member); nothing to merge
  member_moments,  // per member; their moments over the valid members feed `estimate`s
  sum,             // per-batch counts, summed per case (exact in any order)
  moments,         // per-batch (n, mean, m2), merged per case along the batch merge tree (parallel/)
  stored,          // per-batch data written as it is by the rank that holds the batch
  summed,          // per-batch sums of doubles, added per case along the batch merge tree
  estimate,        // ensemble mean, std or 95% interval of a member_moments quantity
  derived,         // computed from merged partials (`how` names the computation)
};

/// Which statistic of an estimate a quantity is: the central value (mean, or median), its
/// spread across members (std), its 95% interval (ci95), or another figure that describes the
/// same estimate (detail, e.g. its standard error). Entries with the same `source` belong to one
/// estimate; `merge` says whether the reduction computes them from member moments (estimate) or
/// another stage does (derived).
enum class Estimate { none, mean, median, std, ci95, detail };

/// The spec option that switches a quantity on.
enum class Switch { always, sweep, regimes, lyapunov, twins, histogram, snapshots,
                    snapshot_regimes, sweep_regimes, trajectories, paired_snapshots,
                    response };

/// Which switches a campaign turns on (plan::Plan::outputs).
struct Options {
  bool sweep = false, regimes = false, lyapunov = false, twins = false, histogram = false,
       snapshots = false, trajectories = false;
  bool paired = false;  // ensemble.pair_with_case
  bool response = false;  // statistics.response
};

bool is_on(Switch s, const Options& options);
/// The spec key of a switch ("always", "statistics.regimes", ...), for docs/archive.md.
std::string switch_text(Switch s);

template <class R>
using FieldOf = std::variant<std::monostate, std::vector<double> R::*,
                             std::vector<std::int64_t> R::*, std::vector<std::uint8_t> R::*,
                             std::vector<std::string> R::*>;

/// One declared quantity.
struct Quantity {
  std::string name;  // unique within its scope; a batch quantity's checkpoint array name
  std::string path;  // archive path ("" when not archived); "/case/<parameter>" is a pattern
  std::vector<std::string> dims;  // archive dimensions, slowest first
  ElementType type = ElementType::float64;
  std::string units;  // "1", kModelTime or kPerModelTime
  std::string long_name;
  Scope scope = Scope::ensemble;
  Merge merge = Merge::none;
  Switch when = Switch::always;
  std::string source;                  // the estimate it belongs to (a member quantity's name)
  Estimate estimate = Estimate::none;  // which statistic of that estimate
  std::string how;                     // derived: what computes it
  FieldOf<BatchResult> batch_field;        // member and batch scope
  FieldOf<EnsembleResults> ensemble_field; // ensemble scope

  bool archived() const { return !path.empty(); }
  bool present(const Options& options) const { return is_on(when, options); }
  /// The archive group ("member" for "/member/time_mean"; "" for the root).
  std::string group() const;
  /// The dataset's name within its group ("time_mean").
  std::string leaf() const;
  /// How it is merged, in words (docs/archive.md).
  std::string merge_text() const;
};

/// One dimension of the archive. A name means the same thing in every group that uses it, and
/// where a group gives it coordinate values they are those of every other group.
struct Dimension {
  std::string name;
  std::string units;                // of its coordinate values
  std::string long_name;
  std::vector<std::string> labels;  // fixed coordinate values; empty when the campaign sets them
  std::string coordinates;          // what its coordinate values are, for docs/archive.md
  bool named = false;  // its entries are named (observables, regimes, bounds), not a numeric axis
};

/// One per-case result as `chaosweep summary` shows it: an archived ensemble quantity indexed
/// first by case, with the quantities that describe the same estimate (same `source`) folded in.
struct PerCase {
  const Quantity* value = nullptr;  // the central value (or the quantity itself, no estimate)
  const Quantity* std = nullptr;
  const Quantity* ci95 = nullptr;
  std::vector<const Quantity*> details;
  /// A detail's key beside the value: its leaf without the value's leaf as prefix
  /// ("stderr" for time_mean_stderr beside time_mean).
  std::string detail_key(const Quantity& detail) const;
};

/// Every archived ensemble quantity indexed by case alone or by case and one named dimension,
/// grouped by estimate, in table order (curves over leads, times or bins are left out).
std::vector<PerCase> per_case_results();

/// Every quantity, in archive order.
const std::vector<Quantity>& quantities();
/// The quantity archived at `path` ("/case/forcing" matches "/case/<parameter>"); throws
/// std::logic_error if unknown.
const Quantity& at_path(const std::string& path);
/// The quantity `name` of `scope`; throws std::logic_error if unknown.
const Quantity& quantity(Scope scope, const std::string& name);

const std::vector<Dimension>& dimensions();
/// The dimension `name`; throws std::logic_error if unknown.
const Dimension& dimension(const std::string& name);

/// The archive's dataset table, then its dimension table, as Markdown (docs/archive.md).
std::string markdown_table();

/// Every declared quantity as a JSON array of objects (name, path, dims, type, units,
/// long_name, scope, present, merged), then the dimensions: for scripts and tests.
std::string json_table();

/// Calls f(quantity, array) for every quantity held in `result` (a BatchResult or an
/// EnsembleResults, const or not), in table order; `array` is the std::vector of the quantity's
/// element type.
/// The array binding of `q` for results of type R (BatchResult or EnsembleResults).
template <class R>
const FieldOf<R>& field_of(const Quantity& q) {
  if constexpr (std::is_same_v<R, BatchResult>) {
    return q.batch_field;
  } else {
    return q.ensemble_field;
  }
}

template <class R, class F>
void for_each_array(R& result, F&& f) {
  for (const Quantity& q : quantities()) {
    std::visit(
        [&](auto member) {
          if constexpr (!std::is_same_v<decltype(member), std::monostate>) f(q, result.*member);
        },
        field_of<std::remove_const_t<R>>(q));
  }
}

[[noreturn]] void throw_wrong_array(const Quantity& q);

/// The array of quantity `q` in `result`, which must hold element type T (else logic_error).
template <class T, class R>
auto& array_of(R& result, const Quantity& q) {
  using Plain = std::remove_const_t<R>;
  const auto* member = std::get_if<std::vector<T> Plain::*>(&field_of<Plain>(q));
  if (member == nullptr) throw_wrong_array(q);
  return result.**member;
}

}  // namespace chaosweep::results
