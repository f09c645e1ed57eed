// Reduction of per-batch results into per-case ensemble estimates, identical on every rank.
//
// Each rank summarises its own batches (moments across the batch's valid members, histogram
// counts); the summaries are merged per case along a merge tree whose shape is fixed by the
// plan, not by the rank count (parallel/merge_batches.hpp), and counts are summed exactly. The
// estimates are therefore bitwise the same for any number of ranks, and no rank holds more
// than a few summaries per case.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "parallel/batch_summary.hpp"
#include "parallel/communicator.hpp"
#include "plan/plan.hpp"
#include "results/ensemble_results.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"

namespace chaosweep::parallel {

/// The campaign's ensemble estimates (declared in results/table.hpp).
using results::EnsembleResults;

/// Share of the twin pairs that should separate within the window (below it, a warning and
/// /twins/suggested_duration).
constexpr double kMostPairs = 0.9;

/// Reduces the batches this rank ran (`local`, in batch order, a contiguous share of the plan's
/// batches) into campaign-wide estimates on every rank. Collective.
EnsembleResults reduce(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                       const std::vector<run::BatchResult>& local);
/// The same from this rank's partial, its batches folded as they finished. Collective.
EnsembleResults reduce(const Communicator& comm, const spec::Spec& spec, const plan::Plan& plan,
                       const LocalPartial& mine);
/// The estimates from every case's merged summary (however the batches were joined: ranks of
/// one job, or the parts of a campaign run as several jobs). Pure.
EnsembleResults reduce(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged);

/// The twin part of reduce() (fills the twin fields of `r`; nothing without twins).
void reduce_twins(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged,
                  EnsembleResults& r);
/// The snapshot part of reduce() (snapshot_reduce.cpp): the per-snapshot moments and regime
/// counts of every case. Nothing when there are none.
void reduce_snapshots(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged,
                      EnsembleResults& r);
/// The transient response against the paired reference case (snapshot_reduce.cpp), after
/// reduce_snapshots. Nothing without paired cases and snapshots.
void reduce_transient(const spec::Spec& spec, const plan::Plan& plan, const MergedCases& merged,
                      EnsembleResults& r);
/// The response predicted from fluctuations (response_reduce.cpp). Nothing without
/// statistics.response.
void reduce_predicted_response(const spec::Spec& spec, const plan::Plan& plan,
                               const MergedCases& merged, EnsembleResults& r);

}  // namespace chaosweep::parallel
