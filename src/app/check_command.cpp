// `chaosweep check`: validate a spec and print the plan, sizes and a calibrated cost estimate.
#include <algorithm>
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "app/commands.hpp"
#include "app/local_work.hpp"
#include "core/bytes_text.hpp"
#include "core/error.hpp"
#include "integrators/lanes.hpp"
#include "models/model.hpp"
#include "parallel/batch_summary.hpp"
#include "plan/member_output.hpp"
#include "plan/plan.hpp"
#include "run/batch_runner.hpp"
#include "run/lyapunov.hpp"
#include "run/twins.hpp"
#include "spec/load.hpp"
#include "stats/merge_tree.hpp"

namespace chaosweep::app {
namespace {


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

/// Per-member values of an archived member kept until the archive is written (doubles):
/// initial state, time mean and variance per observable, regime fraction and residence,
/// transitions and status.
double per_member_doubles(const plan::Plan& plan) {
  const double n_obs = static_cast<double>(plan.observables.size());
  const double n_reg = static_cast<double>(plan.regime_labels.size());
  return plan.state_dim + 2 * n_obs + 2 * n_reg + 2;
}

/// Snapshot statistics per rank (doubles): the batch in progress keeps every member's values
/// at every snapshot time; `batches` finished ones (n, mean, m2) per time and observable and a
/// count per time and regime.
double snapshot_doubles_per_rank(const plan::Plan& plan, double batches) {
  const double times = static_cast<double>(plan.snapshot_count);
  const double n_obs = static_cast<double>(plan.observables.size());
  const double n_reg = static_cast<double>(plan.regime_labels.size());
  return times * (n_obs * plan.batch_size + batches * (3 * n_obs + n_reg));
}

/// statistics.response in a batch in progress: the last max_lag / every + 1 states and their
/// running sum per member, and the sums of the groups of its members.
double response_doubles(const plan::Plan& plan) {
  if (plan.response_every_steps == 0) return 0.0;
  const double d = plan.state_dim, n_obs = static_cast<double>(plan.observables.size());
  const double block = 1.0 + n_obs + d + d * (d + 1.0) / 2.0 + n_obs * d;
  const double groups = std::min<double>(plan.response_groups, 2.0 + plan.batch_size);
  return (plan.response_lags + 2.0) * d * plan.batch_size + groups * block;
}

double trajectory_doubles(const plan::Plan& plan) {
  return static_cast<double>(plan.cases.size()) * plan.trajectory_members *
         plan.trajectory_samples * plan.state_dim;
}

/// Twin experiment: the twin state and log-separation series of a batch in progress and the
/// per-lead moments of each finished batch (memory), or the archive's twin datasets.
double twin_doubles(const plan::Plan& plan, double batches, bool archive) {
  const run::TwinTimes& t = plan.twins;
  if (t.every_steps == 0) return 0.0;
  const double leads = static_cast<double>(t.leads);
  if (archive) {
    // per case the curves against lead (mean and std of the log separation, the unseparated
    // share) and a dozen scalars; the per-member datasets are counted with the others
    return static_cast<double>(plan.cases.size()) * (3.0 * leads + 12.0);
  }
  return (leads + 4.0 * plan.state_dim) * plan.batch_size + batches * 3.0 * leads;
}

/// The calibration: a short piece of the campaign itself, timed.
struct Calibration {
  double rate = 0.0;                // member-steps per second of one core
  double seconds = 0.0;             // of the timed piece
  std::int64_t spinup_steps = 0;    // of the timed piece
  std::int64_t accumulate_steps = 0;
  int width = 0;                    // members integrated side by side (the batch width)
};

constexpr double kCalibrationSeconds = 0.2;  // aim of the timed piece
constexpr std::int64_t kFirstPieceSteps = 200;

/// The campaign's plan cut to `steps` steps of its first batch, which is the piece's only batch
/// (batch(0)), spin-up and accumulation in the campaign's proportions (at least one accumulated
/// step), with every statistic at the spec's own spacing: snapshots, twin leads and trajectory
/// samples keep their step intervals, so the piece has the same events per step as the
/// campaign. Lyapunov exponents, the histogram, regimes and a schedule come with the spec.
plan::Plan calibration_plan(const plan::Plan& plan, std::int64_t steps) {
  plan::Plan p = plan;
  const std::int64_t total = plan.total_steps();
  steps = std::clamp<std::int64_t>(steps, 2, total);
  p.spinup_steps = std::min<std::int64_t>(
      steps - 1, std::llround(static_cast<double>(steps) * plan.spinup_steps / total));
  p.accumulate_steps = steps - p.spinup_steps;
  if (p.snapshot_every_steps > 0) {
    p.snapshot_count = p.accumulate_steps / p.snapshot_every_steps + 1;
  }
  if (p.trajectory_every_steps > 0) {
    p.trajectory_samples = p.total_steps() / p.trajectory_every_steps + 1;
  }
  if (p.response_every_steps > 0) {
    p.response_samples = p.accumulate_steps / p.response_every_steps + 1;
  }
  p.cases = {plan.cases.front()};
  p.members = plan.batch(0).count;
  p.trajectory_members = static_cast<int>(std::min<std::int64_t>(p.trajectory_members, p.members));
  return p;
}

/// Seconds to integrate the first batch of the first case over `piece` and compute everything
/// the campaign computes for a finished batch (its Lyapunov exponents included). The case's
/// base state (an attractor spin-up of one state) is reached before the clock starts.
double time_piece(const spec::Spec& spec, const plan::Plan& piece) {
  const run::CaseRunner runner(spec, piece, piece.cases.front());
  const auto start = std::chrono::steady_clock::now();
  run::BatchResult result = runner.run(piece.batch(0));
  run::add_lyapunov(spec, piece, result);
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

/// Member-steps per second of one core for this campaign, statistics included: a first short
/// piece, then one long enough for about kCalibrationSeconds (never longer than the campaign's
/// own run of a batch), whose rate is the measurement.
Calibration calibrate(const spec::Spec& spec, const plan::Plan& plan) {
  std::int64_t steps = std::min(kFirstPieceSteps, plan.total_steps());
  for (;;) {
    const plan::Plan piece = calibration_plan(plan, steps);
    const double seconds = time_piece(spec, piece);
    const bool enough = seconds >= kCalibrationSeconds / 2 || piece.total_steps() == plan.total_steps();
    if (enough) {
      Calibration c;
      c.seconds = seconds;
      c.spinup_steps = piece.spinup_steps;
      c.accumulate_steps = piece.accumulate_steps;
      c.width = piece.batch_size;
      c.rate = static_cast<double>(piece.batch_size) * piece.total_steps() / std::max(seconds, 1e-9);
      return c;
    }
    const double grow = seconds > 0 ? std::clamp(kCalibrationSeconds / seconds, 2.0, 1000.0) : 1000.0;
    steps = std::min<std::int64_t>(plan.total_steps(),
                                   static_cast<std::int64_t>(static_cast<double>(piece.total_steps()) * grow));
  }
}

/// What the calibration ran besides the integration and the time moments, as a list.
std::string calibrated_statistics(const spec::Spec& spec) {
  const spec::Statistics& st = spec.statistics;
  std::vector<std::string> parts = {"time moments"};
  if (st.regimes.kind == spec::RegimeKind::sign) parts.push_back("sign regimes");
  if (st.regimes.kind == spec::RegimeKind::nearest) parts.push_back("nearest-centroid regimes");
  if (st.histogram.enabled) parts.push_back("histogram");
  if (st.lyapunov.enabled) {
    parts.push_back("Lyapunov exponents (" + std::to_string(st.lyapunov.exponents) + ")");
  }
  if (st.twins.enabled) parts.push_back("twins");
  if (st.snapshots.enabled) parts.push_back("snapshots");
  if (st.response.enabled) parts.push_back("response sums");
  if (spec.output.trajectories.members > 0) parts.push_back("trajectories");
  if (spec.schedule.kind != spec::ScheduleKind::none) parts.push_back("schedule");
  std::string text;
  for (std::size_t i = 0; i < parts.size(); ++i) {
    text += (i == 0 ? "" : i + 1 == parts.size() ? " and " : ", ") + parts[i];
  }
  return text;
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
void print_parameters(const spec::Spec& spec, const plan::Plan& plan) {
  const models::ModelInfo& info = *plan.model;
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
      const bool given = std::any_of(spec.parameters_given.begin(), spec.parameters_given.end(),
                                     [&](const auto& g) { return g.first == p.name; });
      const std::vector<double>& v = spec.parameters.at(p.name);
      text = value_text(v);
      if (p.shape == models::ParameterShape::matrix) {  // as its rows
        const std::size_t side = static_cast<std::size_t>(std::lround(std::sqrt(v.size())));
        text.clear();
        for (std::size_t r = 0; side > 0 && r < side; ++r) {
          text += (text.empty() ? "" : ", ") +
                  value_text({v.begin() + static_cast<std::ptrdiff_t>(r * side),
                              v.begin() + static_cast<std::ptrdiff_t>((r + 1) * side)});
        }
        text = "[" + text + "]";
      }
      text += given ? "" : " (default)";
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

/// Integrates every case's spin-up to the attractor, as `run` does before it creates any file,
/// so that a dt too coarse for some case is refused here (the same one-line error); at one
/// register's width, which gives each column the same bits as the campaign's batch width.
/// Returns the seconds it took.
double check_spinups(const spec::Spec& spec, const plan::Plan& plan) {
  if (spec.ensemble.initial.kind != spec::InitialKind::attractor) return 0.0;
  const auto start = std::chrono::steady_clock::now();
  plan::Plan narrow = plan;
  narrow.batch_size = integrators::kLanes;
  for (const plan::Case& c : plan.cases) {
    try {
      run::case_base_state(spec, narrow, c);
    } catch (const run::SpinupDiverged& e) {
      throw spinup_error(spec, c, e);
    }
  }
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

/// The integration method, and the noise when there is some.
void print_method_and_noise(const spec::Spec& spec) {
  const std::string& method = spec.integration.method;
  const spec::Noise& noise = spec.noise;
  if (noise.kind == spec::NoiseKind::none) {
    std::printf("  method         %s\n", method.c_str());
    return;
  }
  if (noise.kind == spec::NoiseKind::red) {
    std::printf("  method         %s\n", method.c_str());
  } else {
    std::printf("  method         %s (%s)\n", method.c_str(), spec::noise_calculus(method));
  }
  std::string variables;
  for (const std::string& name : noise.variable_names) {
    variables += (variables.empty() ? "" : ", ") + name;
  }
  char amplitude[64];
  std::snprintf(amplitude, sizeof amplitude, "%g", noise.amplitude);
  const bool scheduled = spec.schedule.kind != spec::ScheduleKind::none &&
                         spec.schedule.parameter == spec::kNoiseAmplitudeAxis;
  char kind[96];
  std::snprintf(kind, sizeof kind, "red (correlation time %g)", noise.correlation_time);
  std::printf("  noise          %s, amplitude %s, on %s (%s)\n",
              noise.kind == spec::NoiseKind::red ? kind : spec::noise_kind_name(noise.kind),
              scheduled ? (noise.amplitude_swept ? "scheduled, offset by the swept value"
                                                 : "scheduled")
              : noise.amplitude_swept ? "swept"
                                      : amplitude,
              variables.c_str(),
              noise.shared ? "one realisation shared by the members of a case"
                           : "a realisation per member");
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
  plan::check_member_output(spec, plan);
  if (options.pilot) check_pilot_options(spec, plan, options.pilot_options);
  const double cases = static_cast<double>(plan.cases.size());
  const double members = static_cast<double>(plan.member_count());
  const double member_steps = members * plan.total_steps();
  const std::int64_t n_batches = plan.batch_count();
  const plan::Range widest = plan::share(n_batches, 0, options.ranks);
  const double share = static_cast<double>(widest.last - widest.first);

  const double spinup_seconds = check_spinups(spec, plan);
  std::printf("%s: valid\n", spec.source_path.c_str());
  std::printf("  campaign       %s\n", spec.name.c_str());
  std::printf("  model          %s (%d state variables, %zu observables)\n", spec.model.c_str(),
              plan.state_dim, plan.observables.size());
  print_parameters(spec, plan);
  print_sweep(spec);
  if (spec.ensemble.initial.kind == spec::InitialKind::attractor) {
    std::printf("  spin-ups       every case reaches its attractor state (%lld steps each, %.2g s)\n",
                static_cast<long long>(plan.attractor_spinup_steps), spinup_seconds);
  }
  std::printf("  cases          %.0f\n", cases);
  std::printf("  members        %lld per case, %.0f in all\n",
              static_cast<long long>(plan.members), members);
  if (spec.ensemble.pair_with_case >= 0) {
    std::printf("  pairing        member m of every case starts from member m of case %lld "
                "(its state%s), so the cases differ only by their parameters\n",
                static_cast<long long>(spec.ensemble.pair_with_case),
                spec.noise.kind == spec::NoiseKind::none ? "" : " and its noise");
    if (plan.pair_groups > 0) {
      std::printf("  pair groups    the paired cases' correlation behind the local-slope errors "
                  "is estimated over %d groups of members\n", plan.pair_groups);
    }
  }
  std::printf("  steps          %lld spin-up + %lld accumulated per member (dt %g)\n",
              static_cast<long long>(plan.spinup_steps),
              static_cast<long long>(plan.accumulate_steps), spec.integration.dt);
  print_method_and_noise(spec);
  std::printf("  member-steps   %.3g\n", member_steps);
  std::printf("  batches        %lld of %d members; at most %.0f per rank on %d ranks\n",
              static_cast<long long>(n_batches), plan.batch_size, share, options.ranks);

  // A rank keeps the member rows the archive holds (at most all of them, at most its share),
  // the batch in progress, and its part of the merge tree (packed, and twice more while the
  // ranks' parts are combined); finished batches leave only their summary in the tree.
  const parallel::SummaryParts parts = parallel::summary_parts(spec, plan);
  const stats::MergeTree tree({static_cast<std::int64_t>(plan.cases.size()), plan.batches_per_case()},
                              parts.layout);
  const double tree_bytes =
      8.0 * (static_cast<double>(tree.packed_size()) + cases * static_cast<double>(parts.count_width));
  const double kept_rows = std::min(share * plan.batch_size, cases * static_cast<double>(plan.archived_members));
  const double per_rank_bytes =
      8.0 * (kept_rows * per_member_doubles(plan) + trajectory_doubles(plan) / options.ranks +
             8.0 * plan.batch_size * plan.state_dim + twin_doubles(plan, 0.0, false) +
             snapshot_doubles_per_rank(plan, 0.0) + response_doubles(plan)) +
      3.0 * tree_bytes;
  const double archive_bytes =
      plan::member_bytes(plan, plan.archived_members) +
      8.0 * (trajectory_doubles(plan) +
             twin_doubles(plan, 0.0, true) +
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
  if (plan.response_every_steps > 0) {
    std::string forcings;
    for (const std::string& f : plan.forcings) forcings += (forcings.empty() ? "" : ", ") + f;
    std::printf("  response       predicted from fluctuations for %s: %lld samples per member "
                "every %g, lags to %g, error over %d groups of members; %.3g MiB of sums in "
                "every batch summary\n",
                forcings.c_str(), static_cast<long long>(plan.response_samples),
                spec.statistics.response.every, spec.statistics.response.max_lag,
                plan.response_groups, 8.0 * static_cast<double>(parts.response_width) / 1048576.0);
  }
  if (plan.archived_members == plan.members) {
    std::printf("  member output  every member's own results (output.members: all)\n");
  } else if (plan.archived_members == 0) {
    std::printf("  member output  none: ensemble estimates only (output.members: none)\n");
  } else {
    std::printf("  member output  the first %lld members of each case (output.members: "
                "{sample: %lld})\n", static_cast<long long>(plan.archived_members),
                static_cast<long long>(plan.archived_members));
  }
  std::printf("  memory         about %s per rank\n", bytes_text(per_rank_bytes).c_str());
  std::printf("  reduction      %s per rank exchanged once (merge tree: %zu nodes of %zu values per "
              "case at most, whatever the batch count)\n",
              bytes_text(tree_bytes).c_str(), tree.slots(), parts.layout.width());
  std::printf("  archive        about %s\n", bytes_text(archive_bytes).c_str());

  if (options.calibrate) {
    const Calibration c = calibrate(spec, plan);
    const double rate = c.rate;
    const double core_seconds = member_steps / rate;
    std::printf("  calibration    %d members x %lld steps (%lld spin-up + %lld accumulated) of "
                "case %lld with %s: %.2g s\n",
                c.width, static_cast<long long>(c.spinup_steps + c.accumulate_steps),
                static_cast<long long>(c.spinup_steps), static_cast<long long>(c.accumulate_steps),
                static_cast<long long>(plan.cases.front().index),
                calibrated_statistics(spec).c_str(), c.seconds);
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
