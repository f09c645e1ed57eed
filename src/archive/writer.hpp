// Writes the campaign archive: one HDF5 file, written collectively by every rank under a
// temporary name and renamed into place when complete, so a reader never sees a partial file.
#pragma once

#include <string>
#include <vector>

#include "parallel/reduce.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "spec/spec.hpp"

namespace chaosweep::archive {

struct RunInfo {
  int ranks = 1;
  int rank = 0;
  std::string created_utc;  // ISO 8601
  std::string status = "complete";
  int parts = 0;  // > 0: merged from this many part archives (`chaosweep merge`)
};

/// Collective. `local` are this rank's batch results in batch order (a contiguous share of the
/// plan's batches); `ensemble` is identical on every rank. The file is written to
/// `path + ".partial"` and renamed to `path` after every rank has closed it.
void write_archive(const std::string& path, const spec::Spec& spec, const plan::Plan& plan,
                   const std::vector<run::BatchResult>& local,
                   const parallel::EnsembleResults& ensemble, const RunInfo& info);

/// Collective, after every rank has closed the file at `partial`: rank 0 seals it
/// (archive/seal.hpp), renames it to `path` and syncs the directory. Throws IoError on every
/// rank when any step fails.
void seal_into_place(const std::string& partial, const std::string& path);

}  // namespace chaosweep::archive
