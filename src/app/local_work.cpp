#include "app/local_work.hpp"

#include <spdlog/spdlog.h>

#include <algorithm>
#include <chrono>

#include "core/error.hpp"
#include "parallel/batch_summary.hpp"
#include "run/lyapunov.hpp"

namespace chaosweep::app {
namespace {

using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

}  // namespace

LocalWork::LocalWork(const spec::Spec& spec, const plan::Plan& plan, plan::Range share,
                     const checkpoint::Store* store)
    : spec_(spec), plan_(plan), share_(share), store_(store),
      finished_flags_(static_cast<std::size_t>(share.last - share.first), 0),
      partial_(spec, plan, share.first),
      resumed_(finished_flags_.size()) {}

LocalWork::Restored LocalWork::restore() {
  if (!store_) return Restored{};
  return restore(store_->index_done(share_.first, share_.last));
}

LocalWork::Restored LocalWork::restore(checkpoint::DoneIndex done) {
  Restored r;
  if (!store_) return r;
  const std::vector<std::int64_t> generations = store_->generations();
  r.segment_problems = std::move(done.problems);
  r.cut_short = std::move(done.cut_short);
  for (std::size_t i = 0; i < finished_flags_.size(); ++i) {
    const std::int64_t batch = share_.first + static_cast<std::int64_t>(i);
    std::string problem;
    std::optional<run::BatchResult> restored = store_->load_done(done, batch, &problem);
    if (restored) {
      keep(i, std::move(*restored));
      ++r.finished;
      continue;
    }
    if (!problem.empty()) {
      spdlog::warn("{}; batch {} will be recomputed", problem, batch);
      ++r.problems;
    }
    for (std::int64_t g : generations) {  // newest sound state wins
      problem.clear();
      resumed_[i] = store_->load_state(g, batch, &problem);
      if (resumed_[i]) {
        ++r.in_progress;
        break;
      }
      if (!problem.empty()) {
        spdlog::warn("{}; trying an older checkpoint generation", problem);
        ++r.problems;
      }
    }
  }
  return r;
}

bool LocalWork::done() const {
  return !current_ && finished_ == static_cast<std::int64_t>(finished_flags_.size());
}

std::int64_t LocalWork::finished_count() const { return finished_; }

plan::Batch LocalWork::batch_at(std::size_t i) const {
  return plan_.batch(share_.first + static_cast<std::int64_t>(i));
}

SpecError spinup_error(const spec::Spec& spec, const plan::Case& c,
                       const run::SpinupDiverged& e) {
  const spec::Location at = spec.integration.dt_where;
  return SpecError(spec.source_path + ":" + std::to_string(at.line) + ":" +
                   std::to_string(at.column) + ": integration.dt: " +
                   plan::describe_case(spec, c) + ": " + e.what() + " at dt " +
                   fmt::format("{}", spec.integration.dt) + "; reduce integration.dt");
}

template <typename Step>
void LocalWork::in_case(std::size_t i, Step&& step) {
  const plan::Case& c = plan_.cases[static_cast<std::size_t>(batch_at(i).case_index)];
  try {
    step();
  } catch (const run::SpinupDiverged& e) {
    throw spinup_error(spec_, c, e);
  } catch (const SpecError&) {
    throw;
  } catch (const Error& e) {
    throw Error(plan::describe_case(spec_, c) + ": " + e.what(), e.exit_code());
  }
}

const std::vector<double>& LocalWork::base_state(std::int64_t case_index) {
  auto found = base_states_.find(case_index);
  if (found == base_states_.end()) {
    const plan::Case& c = plan_.cases[static_cast<std::size_t>(case_index)];
    found = base_states_.emplace(case_index, run::case_base_state(spec_, plan_, c)).first;
  }
  return found->second;
}

void LocalWork::prepare_cases() {
  for (std::size_t i = 0; i < finished_flags_.size(); ++i) {
    if (!finished_flags_[i]) in_case(i, [&] { base_state(batch_at(i).case_index); });
  }
}

void LocalWork::start_next() {
  while (next_ < finished_flags_.size() && finished_flags_[next_]) ++next_;
  if (next_ == finished_flags_.size()) return;
  const std::size_t i = next_;
  const plan::Batch batch = batch_at(i);
  in_case(i, [&] {
    if (batch.case_index != runner_case_) {
      runner_.reset();
      runner_case_ = -1;
      runner_ = std::make_unique<run::CaseRunner>(
          spec_, plan_, plan_.cases[static_cast<std::size_t>(batch.case_index)],
          base_state(batch.case_index));
      runner_case_ = batch.case_index;
    }
    current_index_ = i;
    if (resumed_[i]) {
      current_ = runner_->resume(batch, *resumed_[i]);
      resumed_[i].reset();
    } else {
      current_ = runner_->start(batch);
    }
  });
}

void LocalWork::advance_current(std::int64_t steps) {
  in_case(current_index_, [&] {
    const std::int64_t before = current_->step();
    current_->advance(steps);
    integrated_member_steps_ += (current_->step() - before) * batch_at(current_index_).count;
  });
}

void LocalWork::finish_current() {
  in_case(current_index_, [&] {
    run::BatchResult result = current_->finish();
    run::add_lyapunov(spec_, plan_, result);
    // The reduction needs only the summary; the archive only the kept member rows.
    partial_.summarise(result);
    parallel::keep_archived_rows(plan_, result);
    if (store_) store_->save_done(result);
    keep(current_index_, std::move(result));
  });
  current_.reset();
}

void LocalWork::keep(std::size_t i, run::BatchResult result) {
  partial_.add(result);
  finished_flags_[i] = 1;
  ++finished_;
  // What stays for the archive: the kept member rows and stored trajectories, if any.
  result.summary = {};
  result.summary_counts = {};
  if (!result.status.empty() || !result.trajectory.empty()) kept_.emplace(i, std::move(result));
}

bool LocalWork::work(double seconds) {
  const Clock::time_point start = Clock::now();
  do {
    if (!current_) start_next();
    if (!current_) return true;
    const Clock::time_point chunk_start = Clock::now();
    advance_current(chunk_steps_);
    const double took = seconds_since(chunk_start);
    // Aim at ~50 ms per chunk: short enough to stop promptly, long enough to cost nothing.
    const double scale = took > 0 ? std::clamp(0.05 / took, 0.5, 2.0) : 2.0;
    chunk_steps_ = std::clamp<std::int64_t>(static_cast<std::int64_t>(chunk_steps_ * scale), 8,
                                            std::int64_t{1} << 22);
    if (current_->done()) finish_current();
  } while (seconds_since(start) < seconds);
  return done();
}

std::int64_t LocalWork::save_in_progress(std::int64_t generation) const {
  if (!current_ || !store_) return -1;
  store_->save_state(generation, current_->save());
  return batch_at(current_index_).index;
}

std::vector<run::BatchResult> LocalWork::take_results() {
  std::vector<run::BatchResult> out;
  out.reserve(kept_.size());
  for (auto& [i, r] : kept_) out.push_back(std::move(r));
  kept_.clear();
  return out;
}

}  // namespace chaosweep::app
