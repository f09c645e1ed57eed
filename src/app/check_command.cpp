// `chaosweep check`: validate a spec and print the plan, sizes and a calibrated cost estimate.
#include <algorithm>
#include <charconv>
#include <chrono>
#include <cstdio>
#include <string>

#include "app/commands.hpp"
#include "core/error.hpp"
#include "models/model.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/twins.hpp"
#include "spec/load.hpp"

namespace chaosweep::app {
namespace {

std::string bytes_text(double bytes) {
  const char* units[] = {"B", "KiB", "MiB", "GiB", "TiB", "PiB"};
  int u = 0;
  while (bytes >= 1024 && u < 5) {
    bytes /= 1024;
    ++u;
  }
  char text[32];
  std::snprintf(text, sizeof text, "%.1f %s", bytes, units[u]);
  return text;
}

std::string hours_text(double seconds) {
  char text[48];
  if (seconds < 120) {
    std::snprintf(text, sizeof text, "%.1f s", seconds);
  } else if (seconds < 7200) {
    std::snprintf(text, sizeof text, "%.1f min", seconds / 60);
  } else {
    std::snprintf(text, sizeof text, "%.1f h", seconds / 3600);
  }
  return text;
}

/// Per-member values kept until the archive is written (doubles): initial state, time mean and
/// variance per observable, regime fraction and residence, transitions and status.
double per_member_doubles(const plan::Plan& plan) {
  const double n_obs = static_cast<double>(plan.observables.size());
  const double n_reg = static_cast<double>(plan.regime_labels.size());
  return plan.state_dim + 2 * n_obs + 2 * n_reg + 2;
}

/// Snapshot statistics per rank (doubles): the batch in progress keeps every member's values
/// at every snapshot time; a finished batch keeps (n, mean, m2) per time and observable and a
/// count per time and regime.
double snapshot_doubles_per_rank(const plan::Plan& plan, double batches) {
  const double times = static_cast<double>(plan.snapshot_count);
  const double n_obs = static_cast<double>(plan.observables.size());
  const double n_reg = static_cast<double>(plan.regime_labels.size());
  return times * (n_obs * plan.batch_size + batches * (3 * n_obs + n_reg));
}

double trajectory_doubles(const plan::Plan& plan) {
  return static_cast<double>(plan.cases.size()) * plan.trajectory_members *
         plan.trajectory_samples * plan.state_dim;
}

/// Twin experiment: the twin state and log-separation series of a batch in progress and the
/// per-lead moments of each finished batch (memory), or the archive's twin datasets.
double twin_doubles(const spec::Spec& spec, const plan::Plan& plan, double batches,
                    bool archive) {
  const run::TwinTimes t = run::twin_times(spec, plan);
  if (t.every_steps == 0) return 0.0;
  const double leads = static_cast<double>(t.leads);
  if (archive) {
    return 2.0 * static_cast<double>(plan.member_count()) +
           static_cast<double>(plan.cases.size()) * (2.0 * leads + 8.0);
  }
  return (leads + 4.0 * plan.state_dim) * plan.batch_size + batches * 3.0 * leads;
}

/// Member-steps per second of one core, measured on one batch of the first case.
double calibrate(const spec::Spec& spec, const plan::Plan& plan) {
  plan::Plan probe = plan;
  probe.spinup_steps = 0;
  probe.accumulate_steps = std::min<std::int64_t>(plan.accumulate_steps, 4000);
  probe.trajectory_members = 0;
  probe.trajectory_every_steps = 0;
  probe.trajectory_samples = 0;
  probe.snapshot_every_steps = 0;
  probe.snapshot_count = 0;
  const run::CaseRunner runner(spec, probe, probe.cases.front());
  const auto start = std::chrono::steady_clock::now();
  runner.run(probe.batches.front());
  const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return static_cast<double>(probe.batch_size) * probe.accumulate_steps / s;
}

/// Numbers as the shortest text that reads back to the same double; vectors in brackets.
std::string value_text(const std::vector<double>& values) {
  std::string text;
  for (const double v : values) {
    char buf[32];
    const auto end = std::to_chars(buf, buf + sizeof buf, v).ptr;
    text += (text.empty() ? "" : ", ") + std::string(buf, end);
  }
  return values.size() == 1 ? text : "[" + text + "]";
}

const char* schedule_kind_name(spec::ScheduleKind kind) {
  switch (kind) {
    case spec::ScheduleKind::constant: return "constant";
    case spec::ScheduleKind::ramp: return "ramp";
    case spec::ScheduleKind::step: return "step";
    case spec::ScheduleKind::periodic: return "periodic";
    case spec::ScheduleKind::none: break;
  }
  return "none";
}

/// Every parameter of the model after the defaults are filled in, in the model's order: its
/// value, or how the sweep or the schedule sets it. "(default)" marks the values the spec left
/// to the model.
void print_parameters(const spec::Spec& spec) {
  const models::ModelInfo& info = *models::Registry::instance().find(spec.model);
  int width = 0;
  for (const models::ParameterInfo& p : info.parameters) {
    width = std::max(width, static_cast<int>(p.name.size()));
  }
  const char* label = "parameters";
  for (const models::ParameterInfo& p : info.parameters) {
    const auto axis = std::find_if(spec.sweep.begin(), spec.sweep.end(),
                                   [&](const spec::SweepAxis& a) { return a.parameter == p.name; });
    const bool swept = axis != spec.sweep.end();
    std::string text;
    if (spec.schedule.kind != spec::ScheduleKind::none && spec.schedule.parameter == p.name) {
      text = std::string("follows the schedule (") + schedule_kind_name(spec.schedule.kind) + ")" +
             (swept ? ", offset by the swept value" : "");
    } else if (swept) {
      text = "swept: " + std::to_string(axis->values.size()) + " values from " +
             value_text({axis->values.front()}) + " to " + value_text({axis->values.back()});
    } else {
      const bool given = std::find(spec.parameters_given.begin(), spec.parameters_given.end(),
                                   p.name) != spec.parameters_given.end();
      text = value_text(spec.parameters.at(p.name)) + (given ? "" : " (default)");
    }
    std::printf("  %-14s %-*s  %s\n", label, width, p.name.c_str(), text.c_str());
    label = "";
  }
}

void print_sweep(const spec::Spec& spec) {
  if (spec.sweep.empty()) std::printf("  sweep          none (one case)\n");
  for (const spec::SweepAxis& axis : spec.sweep) {
    std::printf("  sweep          %s: %zu values from %g to %g\n", axis.parameter.c_str(),
                axis.values.size(), axis.values.front(), axis.values.back());
  }
}

}  // namespace

int check_command(const CheckOptions& options) {
  if (options.pilot_options_given && !options.pilot) {
    throw UsageError("--pilot-members, --pilot-duration and the --target options need --pilot");
  }
  if (options.pilot && !options.calibrate) {
    throw UsageError("--pilot times the model for its cost figures; drop --no-calibrate");
  }
  const spec::Spec spec = spec::load_spec(options.spec_path);
  const plan::Plan plan = plan::make_plan(spec);
  if (options.pilot) check_pilot_options(spec, plan, options.pilot_options);
  const double cases = static_cast<double>(plan.cases.size());
  const double members = static_cast<double>(plan.member_count());
  const double member_steps = members * plan.total_steps();
  const std::int64_t n_batches = static_cast<std::int64_t>(plan.batches.size());
  const plan::Range widest = plan::share(n_batches, 0, options.ranks);
  const double share = static_cast<double>(widest.last - widest.first);

  std::printf("%s: valid\n", spec.source_path.c_str());
  std::printf("  campaign       %s\n", spec.name.c_str());
  std::printf("  model          %s (%d state variables, %zu observables)\n", spec.model.c_str(),
              plan.state_dim, plan.observables.size());
  print_parameters(spec);
  print_sweep(spec);
  std::printf("  cases          %.0f\n", cases);
  std::printf("  members        %lld per case, %.0f in all\n",
              static_cast<long long>(plan.members), members);
  std::printf("  steps          %lld spin-up + %lld accumulated per member (dt %g)\n",
              static_cast<long long>(plan.spinup_steps),
              static_cast<long long>(plan.accumulate_steps), spec.integration.dt);
  std::printf("  member-steps   %.3g\n", member_steps);
  std::printf("  batches        %lld of %d members; at most %.0f per rank on %d ranks\n",
              static_cast<long long>(n_batches), plan.batch_size, share, options.ranks);

  const double per_rank_bytes =
      8.0 * (share * plan.batch_size * per_member_doubles(plan) +
             trajectory_doubles(plan) / options.ranks + 8.0 * plan.batch_size * plan.state_dim +
             twin_doubles(spec, plan, share, false) + snapshot_doubles_per_rank(plan, share));
  const double archive_bytes =
      8.0 * (members * per_member_doubles(plan) + trajectory_doubles(plan) +
             twin_doubles(spec, plan, 0.0, true) +
             cases * plan.snapshot_count *
                 (2.0 * plan.observables.size() + plan.regime_labels.size())) +
      65536.0;
  if (spec.schedule.kind != spec::ScheduleKind::none) {
    std::printf("  schedule       %s varies in time%s\n", spec.schedule.parameter.c_str(),
                spec.schedule.offset_by_sweep ? " (offset by the swept value)" : "");
  }
  if (plan.snapshot_count > 0) {
    std::printf("  snapshots      %lld times per case, every %g from t = %g\n",
                static_cast<long long>(plan.snapshot_count), spec.statistics.snapshots.every,
                static_cast<double>(plan.spinup_steps) * spec.integration.dt);
  }
  std::printf("  memory         about %s per rank\n", bytes_text(per_rank_bytes).c_str());
  std::printf("  archive        about %s\n", bytes_text(archive_bytes).c_str());

  if (options.calibrate) {
    const double rate = calibrate(spec, plan);
    const double core_seconds = member_steps / rate;
    std::printf("  cost           %.3g member-steps/s per core (measured) -> %.3g core-hours, "
                "about %s on %d ranks\n",
                rate, core_seconds / 3600, hours_text(share * plan.batch_size *
                                                      plan.total_steps() / rate).c_str(),
                options.ranks);
    if (options.pilot) run_pilot(spec, plan, options.pilot_options, rate);
  }
  return 0;
}

}  // namespace chaosweep::app
