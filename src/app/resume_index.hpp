// The index of finished batches for a resume on many ranks. Each rank reads the record
// headers of some of the checkpoint segments only (segment k by rank k mod ranks) and sends
// every entry to the rank that owns its batch in this run; the entries a rank receives are
// put back in segment and file order, so that "the first sound record wins" picks the same
// record as an index made by reading every segment. Memory and reads per rank grow with its
// own batches and its share of the segments, not with the whole campaign.
#pragma once

#include <cstdint>

#include "checkpoint/store.hpp"
#include "parallel/communicator.hpp"
#include "plan/plan.hpp"

namespace chaosweep::app {

/// The records of this rank's batches. `run` is the run's batches [first, last) (the whole
/// campaign, or a part), shared among the ranks by plan::share. The damage found in every
/// segment is gathered on rank 0, in segment order, into its result's problems and cut_short
/// (each segment is read by one rank, so each is reported once; rank 0 alone logs at info
/// level); the other ranks' lists are empty. Collective.
checkpoint::DoneIndex distributed_index(const parallel::Communicator& comm,
                                        const checkpoint::Store& store, plan::Range run);

}  // namespace chaosweep::app
