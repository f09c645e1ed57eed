// What the commands that run under MPI share (see collective.hpp).
#include "app/collective.hpp"

#include <spdlog/spdlog.h>

#include <cmath>
#include <ctime>

#include "app/logging.hpp"
#include "core/error.hpp"

namespace chaosweep::app {

std::string utc_now() {
  const std::time_t now = std::time(nullptr);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&now));
  return text;
}

/// Runs `step` on every rank; if it throws an Error on any rank, every rank returns the same
/// exit status and the lowest failing rank prints its one-line message (with contiguous shares
/// of the batches, the error of the lowest case). Used for the checks that precede any work,
/// where no rank is left waiting in a collective and no abort is needed.
int agree(const parallel::Communicator& comm, const std::function<void()>& step) {
  int code = 0;
  std::string message;
  try {
    step();
  } catch (const Error& e) {
    code = e.exit_code();
    message = e.what();
  }
  if (!comm.any(code != 0)) return 0;
  const int reporter = -static_cast<int>(comm.max(code != 0 ? -comm.rank() : -comm.size()));
  if (comm.rank() == reporter) print_error(message, comm.rank(), 0);
  return static_cast<int>(comm.max(code != 0 ? code : 0));
}

void warn_about_estimates(const spec::Spec& spec, const plan::Plan& plan,
                          const parallel::EnsembleResults& e) {
  const std::size_t n_obs = plan.observables.size();
  for (std::size_t i = 0; i < e.linear_fit_pvalue.size() && n_obs > 0; ++i) {
    if (!(e.linear_fit_pvalue[i] < 0.01)) continue;
    spdlog::warn("the response of {} along {} is not linear within the errors (chi-square "
                 "{:.3g} for {} degrees of freedom, p {:.2g}): one slope does not describe it; "
                 "see /response/local_slope",
                 plan.observables[i % n_obs], spec.sweep[i / n_obs].parameter,
                 e.linear_fit_chi2[i], e.linear_fit_dof[i], e.linear_fit_pvalue[i]);
  }
  for (std::size_t c = 0; c < e.non_chaotic.size(); ++c) {
    if (e.non_chaotic[c] == 0) continue;
    spdlog::warn("{} does not behave chaotically: {}", plan::describe_case(spec, plan.cases[c]),
                 e.non_chaotic_reason[c]);
  }
  for (std::size_t c = 0; c < e.twin_pairs.size(); ++c) {
    const double pairs = static_cast<double>(e.twin_pairs[c]);
    const double reached = static_cast<double>(e.horizon_reached[c]);
    if (!(pairs > 0.0) || reached >= parallel::kMostPairs * pairs) continue;
    if (e.twins_not_separating[c] != 0) continue;  // flagged above
    if (std::isfinite(e.suggested_duration[c])) {
      spdlog::warn("{}: only {} of {} twin pairs separated within the window; at the pace so "
                   "far a duration of about {:.3g} would let about 90% separate",
                   plan::describe_case(spec, plan.cases[c]), e.horizon_reached[c], e.twin_pairs[c], e.suggested_duration[c]);
    } else {
      spdlog::warn("{}: only {} of {} twin pairs separated within the window, and their "
                   "survival curve levelled off or too few separated to extrapolate: a longer "
                   "window may not separate the rest",
                   plan::describe_case(spec, plan.cases[c]), e.horizon_reached[c], e.twin_pairs[c]);
    }
  }
}

/// A campaign in which some case kept no valid member has no estimate for it: the archive is
/// written, but the run fails (exit 1, one line naming the cases) so that a dependent job does
/// not go on as if every case had results.
int report_empty_cases(const parallel::Communicator& comm, const spec::Spec& spec,
                       const plan::Plan& plan, const parallel::EnsembleResults& e) {
  std::string cases;
  std::size_t count = 0;
  for (std::size_t c = 0; c < e.valid_members.size(); ++c) {
    if (e.valid_members[c] > 0) continue;
    if (++count <= 5) cases += (cases.empty() ? "" : "; ") + plan::describe_case(spec, plan.cases[c]);
  }
  if (count == 0) return kExitComplete;
  if (count > 5) cases += fmt::format("; and {} more", count - 5);
  if (comm.rank() == 0) {
    print_error(fmt::format("{} of {} cases kept no valid member (every member became "
                            "non-finite; a smaller dt?), so they have no estimates: {}",
                            count, plan.cases.size(), cases),
                0, 1);
  }
  return kExitFailure;
}

}  // namespace chaosweep::app
