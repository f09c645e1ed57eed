// The table of results is complete and self-consistent: every array a batch or the campaign
// holds is declared once, every dimension and estimate it names exists, and a stage that
// iterates the table reaches exactly the arrays of the structs.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstddef>
#include <set>
#include <string>
#include <vector>

#include "results/table.hpp"

namespace chaosweep::results {
namespace {

std::size_t bound_arrays(Scope a, Scope b) {
  std::size_t n = 0;
  for (const Quantity& q : quantities()) n += (q.scope == a || q.scope == b) ? 1 : 0;
  return n;
}

TEST(ResultsTable, EveryArrayOfABatchIsDeclared) {
  // Every array member of BatchResult follows its identity fields and is a std::vector of the
  // same size; the table must bind each of them, except the last two, the batch's summary for
  // the reduction (parallel/batch_summary.hpp), which is no archive quantity.
  const std::size_t arrays = (offsetof(BatchResult, summary) - offsetof(BatchResult, initial_state)) /
                             sizeof(std::vector<double>);
  EXPECT_EQ(sizeof(BatchResult) - offsetof(BatchResult, summary), 2 * sizeof(std::vector<double>));
  EXPECT_EQ(bound_arrays(Scope::member, Scope::batch), arrays);
  std::set<std::string> names;
  BatchResult r;
  for_each_array(r, [&](const Quantity& q, auto& values) {
    EXPECT_TRUE(values.empty()) << q.name;
    EXPECT_TRUE(names.insert(q.name).second) << "declared twice: " << q.name;
  });
  EXPECT_EQ(names.size(), arrays);
}

TEST(ResultsTable, EveryArrayOfTheEnsembleIsDeclared) {
  const std::size_t arrays =
      offsetof(EnsembleResults, non_finite_members) / sizeof(std::vector<double>);
  EXPECT_EQ(bound_arrays(Scope::ensemble, Scope::ensemble), arrays);
  std::set<std::string> names;
  const EnsembleResults e;
  for_each_array(e, [&](const Quantity& q, const auto&) {
    EXPECT_TRUE(names.insert(q.name).second) << "declared twice: " << q.name;
  });
  EXPECT_EQ(names.size(), arrays);
}

TEST(ResultsTable, PathsAreUniqueAndDimensionsDeclared) {
  std::set<std::string> paths;
  for (const Quantity& q : quantities()) {
    if (q.archived()) {
      EXPECT_TRUE(paths.insert(q.path).second) << "two quantities at " << q.path;
    }
    EXPECT_FALSE(q.dims.empty()) << q.name;
    for (const std::string& dim : q.dims) EXPECT_NO_THROW(dimension(dim)) << q.name << ": " << dim;
    if (q.scope == Scope::member && q.archived()) {
      ASSERT_GE(q.dims.size(), 2u) << q.path;
      EXPECT_EQ(q.dims[0], "case") << q.path;
      EXPECT_EQ(q.dims[1], "member") << q.path;
      EXPECT_EQ(q.group(), "member") << q.path;
    }
    EXPECT_EQ(q.scope == Scope::coordinate, q.merge == Merge::none) << q.name;
  }
}

TEST(ResultsTable, EachEstimatedQuantityHasItsMeanAndSpread) {
  for (const Quantity& q : quantities()) {
    if (q.merge == Merge::estimate) {
      const Quantity& source = quantity(Scope::member, q.source);
      EXPECT_EQ(source.merge, Merge::member_moments) << q.path;
      EXPECT_EQ(source.when, q.when) << q.path;
    }
    if (q.merge != Merge::member_moments) continue;
    std::set<Estimate> found;
    for (const Quantity& e : quantities()) {
      if (e.merge == Merge::estimate && e.source == q.name) {
        EXPECT_TRUE(found.insert(e.estimate).second) << q.name;
        // the estimate's dimensions: the member's without `member`, an interval adds `bound`
        std::vector<std::string> dims = q.dims;
        dims.erase(dims.begin() + 1);
        if (e.estimate == Estimate::ci95) dims.push_back("bound");
        EXPECT_EQ(e.dims, dims) << e.path;
        EXPECT_EQ(e.units, q.units) << e.path;
      }
    }
    // the mean and the spread always; the interval where it comes from the members alone
    EXPECT_TRUE(found.count(Estimate::mean) && found.count(Estimate::std)) << q.name;
  }
}

TEST(ResultsTable, ArraysAreReachedByTheirDeclaredType) {
  BatchResult r;
  const Quantity& mean = quantity(Scope::member, "time_mean");
  array_of<double>(r, mean).assign(3, 1.5);
  EXPECT_EQ(r.time_mean, std::vector<double>(3, 1.5));
  EXPECT_THROW(array_of<std::int64_t>(r, mean), std::logic_error);
  EXPECT_THROW(quantity(Scope::member, "no_such_quantity"), std::logic_error);
  EXPECT_EQ(&at_path("/case/forcing"), &at_path("/case/<parameter>"));
}

TEST(ResultsTable, PerCaseResultsFoldEachStatisticIntoItsEstimate) {
  // Every archived ensemble quantity indexed by case is shown once: as a value, or folded into
  // the estimate it describes (same source, same switch, same dimensions; an interval adds
  // `bound`). The values' leaves are distinct: they are the keys of the summary's JSON.
  std::set<const Quantity*> seen;
  std::set<std::string> keys;
  for (const PerCase& p : per_case_results()) {
    EXPECT_TRUE(keys.insert(p.value->leaf()).second) << p.value->path;
    EXPECT_TRUE(seen.insert(p.value).second) << p.value->path;
    std::vector<const Quantity*> parts = p.details;
    if (p.std) parts.push_back(p.std);
    if (p.ci95) parts.push_back(p.ci95);
    for (const Quantity* q : parts) {
      EXPECT_TRUE(seen.insert(q).second) << q->path;
      EXPECT_EQ(q->source, p.value->source) << q->path;
      EXPECT_EQ(q->when, p.value->when) << q->path;
      std::vector<std::string> dims = p.value->dims;
      if (q == p.ci95) dims.push_back("bound");
      EXPECT_EQ(q->dims, dims) << q->path;
    }
    if (p.std || p.ci95 || !p.details.empty()) {
      EXPECT_NE(p.value->estimate, Estimate::none) << p.value->path;
    }
  }
  for (const Quantity& q : quantities()) {
    // indexed by case alone or with one named dimension (an interval adds `bound`)
    std::vector<std::string> dims = q.dims;
    if (q.estimate == Estimate::ci95) dims.pop_back();
    const bool per_case = q.scope == Scope::ensemble && q.archived() && dims[0] == "case" &&
                          dims.size() <= 2 && (dims.size() == 1 || dimension(dims[1]).named);
    EXPECT_EQ(seen.count(&q), per_case ? 1u : 0u) << q.path;
  }
  // the time mean carries its interval and errors; the detail keys drop the value's name
  const std::vector<PerCase> shown = per_case_results();
  const auto time_mean = std::find_if(shown.begin(), shown.end(), [](const PerCase& p) {
    return p.value->path == "/ensemble/time_mean";
  });
  ASSERT_NE(time_mean, shown.end());
  EXPECT_EQ(time_mean->ci95->path, "/ensemble/time_mean_ci95");
  std::vector<std::string> details;
  for (const Quantity* d : time_mean->details) details.push_back(time_mean->detail_key(*d));
  EXPECT_EQ(details, (std::vector<std::string>{"stderr", "effective_samples",
                                               "decorrelation_time"}));
}

TEST(ResultsTable, SwitchesFollowTheOptions) {
  Options o;
  EXPECT_TRUE(is_on(Switch::always, o));
  EXPECT_FALSE(is_on(Switch::twins, o));
  o.snapshots = true;
  EXPECT_FALSE(is_on(Switch::snapshot_regimes, o));
  o.regimes = true;
  EXPECT_TRUE(is_on(Switch::snapshot_regimes, o));
}

}  // namespace
}  // namespace chaosweep::results
