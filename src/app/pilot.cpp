// `chaosweep check SPEC --pilot`: run a few members of a few cases at dt and dt/2 with the
// campaign's own engine and turn their time statistics into planning figures.
//
// The pilot plan is the campaign's plan cut down: the first, middle and last case (keeping
// their case indices, hence their members' initial perturbations), the first `members`
// members, the spec's spin-up and a shorter accumulation window T. Each case runs twice:
//   at dt:   exactly as the campaign would run these members, only shorter;
//   at dt/2: the same members from the same initial states (the dt run's base state is given
//            explicitly, so an attractor spin-up is not redone at dt/2), 2x the steps, the
//            same model time.
// Figures (stats/pilot_estimates.hpp): what each case's members do (at rest, moving as one,
// or spread like independent samples), from their time statistics and their states at the
// start and the end of the dt run; the paired change of the ensemble time means between dt and
// dt/2 against the larger of its standard error and a floor (which decides when the members
// coincide); the decorrelation time tau = T Var_m / (2 s2) from the dt run; W = T Var_m, from
// which the 95% half-width of n members over T is t_{0.975,n-1} sqrt(W / (n T)), for case
// means and for the response slopes. Cases whose members do not vary independently give no
// tau, W or half-width.
#include "app/pilot.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "models/model.hpp"
#include "run/batch_runner.hpp"
#include "stats/ensemble.hpp"
#include "stats/pilot_estimates.hpp"

namespace chaosweep::app {
namespace {

constexpr double kProgressAfterSeconds = 3.0;  // show progress when the pilot takes longer
constexpr double kWindowsPerTau = 20.0;        // T >= 20 tau for the tau-based figures

std::string num(double v) {
  if (!std::isfinite(v)) return "-";
  char text[32];
  std::snprintf(text, sizeof text, "%.4g", v);
  return text;
}

std::string count_text(std::int64_t n) { return n < 0 ? "> 1e15" : std::to_string(n); }

/// The first, middle and last case of the sweep (fewer when the sweep has fewer cases).
std::vector<plan::Case> pilot_cases(const plan::Plan& plan) {
  const std::size_t n = plan.cases.size();
  std::vector<std::size_t> picks = {0, (n - 1) / 2, n - 1};
  picks.erase(std::unique(picks.begin(), picks.end()), picks.end());
  std::vector<plan::Case> cases;
  for (std::size_t i : picks) cases.push_back(plan.cases[i]);
  return cases;
}

/// Progress of the pilot on standard error, in member-steps, when it takes a few seconds.
class PilotProgress {
 public:
  PilotProgress(double total_member_steps, double rate)
      : total_(total_member_steps), start_(std::chrono::steady_clock::now()), last_(start_) {
    const double expected = total_member_steps / rate;
    show_ = expected > kProgressAfterSeconds;
    if (show_) std::fprintf(stderr, "pilot: about %.0f s on this process\n", expected);
  }
  void add(double member_steps) {
    done_ += member_steps;
    if (!show_) return;
    const auto now = std::chrono::steady_clock::now();
    if (std::chrono::duration<double>(now - last_).count() < 2.0) return;
    last_ = now;
    const double elapsed = std::chrono::duration<double>(now - start_).count();
    const double fraction = done_ / total_;
    std::fprintf(stderr, "pilot: %3.0f%%, about %.0f s left\n", 100 * fraction,
                 elapsed * (1 - fraction) / std::max(fraction, 1e-9));
  }
  double elapsed() const {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  }

 private:
  double total_, done_ = 0.0;
  std::chrono::steady_clock::time_point start_, last_;
  bool show_ = false;
};

/// Step counts of the pilot at one step size (the step size itself is in the pilot's spec).
struct Timeline {
  std::int64_t spinup_steps = 0;
  std::int64_t accumulate_steps = 0;
};

/// Per-member time statistics of one case at one step size, member-major [member][observable]
/// (NaN for a member that became non-finite), with the members' states at the start and the end
/// of the run, member-major [member][state] and the observables at the end [member][observable].
struct MemberStats {
  std::vector<double> mean;
  std::vector<double> variance;
  std::vector<double> start_state;
  std::vector<double> end_state;
  std::vector<double> end_value;
  std::int64_t non_finite = 0;
};

/// The members' state at the current step of `work`, member-major [count][state_dim], and the
/// selected observables there, [count][observables].
void end_of_run(const run::BatchProgress& work, const models::Model& model, const plan::Plan& p,
                int count, std::vector<double>& state, std::vector<double>& value) {
  const run::BatchState saved = work.save();
  const auto it = std::find_if(saved.reals.begin(), saved.reals.end(),
                               [](const auto& named) { return named.first == "state"; });
  if (it == saved.reals.end()) throw Error("the pilot found no member states in its batch");
  const int dim = p.state_dim, width = p.batch_size;
  const std::vector<double>& x = it->second;  // [state_dim][width]
  const std::size_t n_all = model.observables().size();
  std::vector<double> derived((n_all - static_cast<std::size_t>(dim)) * width);
  model.derived(x.data(), derived.data(), width);
  for (int m = 0; m < count; ++m) {
    for (int i = 0; i < dim; ++i) state.push_back(x[static_cast<std::size_t>(i) * width + m]);
    for (int index : p.observable_index) {
      value.push_back(index < dim ? x[static_cast<std::size_t>(index) * width + m]
                                  : derived[static_cast<std::size_t>(index - dim) * width + m]);
    }
  }
}

/// The pilot's spec: the campaign's, without the extras the pilot does not look at.
spec::Spec pilot_spec(const spec::Spec& spec, double dt) {
  spec::Spec s = spec;
  s.integration.dt = dt;
  s.statistics.histogram.enabled = false;
  s.statistics.lyapunov.enabled = false;
  s.output.trajectories = spec::Trajectories{};
  return s;
}

/// The campaign's plan cut down to `members` members of case `c` on timeline `t`; its batches
/// (plan::Plan::batch) carry c's index.
plan::Plan pilot_plan(const plan::Plan& plan, const plan::Case& c, int members, const Timeline& t) {
  plan::Plan p = plan;
  p.cases = {c};
  p.members = members;
  p.batch_size = std::min(plan.batch_size, (members + 7) / 8 * 8);
  p.spinup_steps = t.spinup_steps;
  p.accumulate_steps = t.accumulate_steps;
  p.trajectory_members = 0;
  p.trajectory_every_steps = 0;
  p.trajectory_samples = 0;
  return p;
}

/// Integrates the pilot members of one case with the campaign's engine; `base` receives the
/// base state the members were perturbed from.
MemberStats run_members(const spec::Spec& spec, const plan::Plan& p, PilotProgress& progress,
                        std::vector<double>& base) {
  const run::CaseRunner runner(spec, p, p.cases.front());
  base = runner.base_state();
  const std::unique_ptr<models::Model> model =
      p.model->make(p.cases.front().parameters);
  MemberStats out;
  const std::int64_t chunk = std::max<std::int64_t>(1, p.total_steps() / 50);
  for (std::int64_t index = 0; index < p.batch_count(); ++index) {
    const plan::Batch batch = p.batch(index);
    const auto work = runner.start(batch);
    while (!work->done()) {
      const std::int64_t before = work->step();
      work->advance(chunk);
      progress.add(static_cast<double>(work->step() - before) * p.batch_size);
    }
    end_of_run(*work, *model, p, batch.count, out.end_state, out.end_value);
    const run::BatchResult r = work->finish();
    out.start_state.insert(out.start_state.end(), r.initial_state.begin(), r.initial_state.end());
    out.mean.insert(out.mean.end(), r.time_mean.begin(), r.time_mean.end());
    out.variance.insert(out.variance.end(), r.time_variance.begin(), r.time_variance.end());
    for (std::uint8_t s : r.status) out.non_finite += s != run::kValid;
  }
  return out;
}

/// Column `o` of a member-major [member][n_obs] array.
std::vector<double> column(const std::vector<double>& a, std::size_t o, std::size_t n_obs) {
  std::vector<double> c;
  for (std::size_t i = o; i < a.size(); i += n_obs) c.push_back(a[i]);
  return c;
}

/// Everything the pilot learnt about one observable of one case.
struct Row {
  std::size_t case_slot = 0;  // index into the pilot's cases
  std::size_t observable = 0;
  stats::PairedDifference dt_change;
  double dt_floor = 0.0;  // stats::dt_change_floor of the dt run
  stats::Decorrelation decorrelation;
};

/// Root-mean-square distance of the valid members' states from their ensemble mean state,
/// states member-major [member][dim]; `valid` marks members with finite time means.
double rms_spread(const std::vector<double>& states, const std::vector<bool>& valid, int dim) {
  std::vector<stats::Moments> per_variable(static_cast<std::size_t>(dim));
  for (std::size_t m = 0; m < valid.size(); ++m) {
    if (!valid[m]) continue;
    for (int i = 0; i < dim; ++i) per_variable[i].add(states[m * dim + i]);
  }
  double sum = 0.0;
  for (const stats::Moments& v : per_variable) sum += v.variance();
  return std::sqrt(sum);
}

/// What the members of one pilot case do (stats::classify), from the run at dt.
struct CaseVerdict {
  stats::BehaviourEvidence evidence;
  stats::CaseBehaviour behaviour = stats::CaseBehaviour::chaotic;
  std::vector<double> means;  // ensemble time mean per observable (a fixed point's coordinates)
  bool usable() const {       // do tau and the half-widths mean anything?
    return behaviour == stats::CaseBehaviour::chaotic ||
           behaviour == stats::CaseBehaviour::independent;
  }
};

CaseVerdict judge_case(const MemberStats& at_dt, std::size_t n_obs, int dim) {
  CaseVerdict v;
  const std::size_t members = at_dt.mean.size() / n_obs;
  std::vector<bool> valid(members, true);
  for (std::size_t m = 0; m < members; ++m) {
    for (std::size_t o = 0; o < n_obs; ++o) {
      valid[m] = valid[m] && std::isfinite(at_dt.mean[m * n_obs + o]) &&
                 std::isfinite(at_dt.end_value[m * n_obs + o]);
    }
  }
  for (std::size_t o = 0; o < n_obs; ++o) {
    stats::Moments mean, variance, end;
    for (std::size_t m = 0; m < members; ++m) {
      if (!valid[m]) continue;
      mean.add(at_dt.mean[m * n_obs + o]);
      variance.add(at_dt.variance[m * n_obs + o]);
      end.add(at_dt.end_value[m * n_obs + o]);
    }
    v.means.push_back(mean.mean);
    stats::add_evidence(v.evidence, mean.mean, variance.mean, end.variance());
  }
  v.evidence.growth = rms_spread(at_dt.end_state, valid, dim) /
                      rms_spread(at_dt.start_state, valid, dim);
  if (std::count(valid.begin(), valid.end(), true) < 2) {
    v.evidence.rest = v.evidence.together = v.evidence.growth = NAN;  // nothing to judge
  }
  v.behaviour = stats::classify(v.evidence);
  return v;
}

struct PilotResult {
  std::vector<plan::Case> cases;
  std::vector<CaseVerdict> verdicts;  // per pilot case
  std::vector<Row> rows;  // case-major, then observable
  std::int64_t non_finite = 0;
  double window = 0.0;    // pilot T
  double seconds = 0.0;
};

PilotResult run_all(const spec::Spec& spec, const plan::Plan& plan, const PilotOptions& options,
                    double rate) {
  PilotResult result;
  result.cases = pilot_cases(plan);
  const double dt = spec.integration.dt;
  const double duration = options.duration > 0 ? options.duration : spec.integration.duration / 10;
  const Timeline coarse{plan.spinup_steps,
                        std::max<std::int64_t>(2, plan::whole_steps(duration, dt))};
  const Timeline fine{2 * coarse.spinup_steps, 2 * coarse.accumulate_steps};
  result.window = static_cast<double>(coarse.accumulate_steps) * dt;

  const plan::Plan first = pilot_plan(plan, result.cases.front(), options.members, coarse);
  const double per_case = static_cast<double>(first.batch_count()) * first.batch_size *
                          (coarse.spinup_steps + coarse.accumulate_steps) * 3.0;
  PilotProgress progress(per_case * static_cast<double>(result.cases.size()), rate);

  const std::size_t n_obs = plan.observables.size();
  for (std::size_t k = 0; k < result.cases.size(); ++k) {
    const plan::Case& c = result.cases[k];
    std::vector<double> base;
    const MemberStats at_dt = run_members(pilot_spec(spec, dt),
                                          pilot_plan(plan, c, options.members, coarse), progress,
                                          base);
    spec::Spec half = pilot_spec(spec, dt / 2);
    half.ensemble.initial.kind = spec::InitialKind::given;
    half.ensemble.initial.state = base;
    std::vector<double> same_base;
    const MemberStats at_half = run_members(half, pilot_plan(plan, c, options.members, fine),
                                            progress, same_base);
    result.non_finite += at_dt.non_finite + at_half.non_finite;
    result.verdicts.push_back(judge_case(at_dt, n_obs, plan.state_dim));
    for (std::size_t o = 0; o < n_obs; ++o) {
      Row row;
      row.case_slot = k;
      row.observable = o;
      const std::vector<double> means = column(at_dt.mean, o, n_obs);
      row.dt_change = stats::paired_difference(means, column(at_half.mean, o, n_obs));
      row.decorrelation =
          stats::decorrelation_time(means, column(at_dt.variance, o, n_obs), result.window);
      row.dt_floor = stats::dt_change_floor(result.verdicts.back().means[o],
                                            row.decorrelation.time_variance, dt, result.window);
      result.rows.push_back(row);
    }
  }
  result.seconds = progress.elapsed();
  return result;
}

std::string case_label(const spec::Spec& spec, const plan::Case& c) {
  std::string text = std::to_string(c.index);
  for (std::size_t a = 0; a < spec.sweep.size(); ++a) {
    text += (a == 0 ? " (" : ", ") + spec.sweep[a].parameter + " " + num(c.axis_values[a]);
  }
  return spec.sweep.empty() ? text : text + ")";
}

/// Core-hours of the full campaign with n members per case and T accumulated.
double core_hours(const spec::Spec& spec, const plan::Plan& plan, std::int64_t members,
                  double duration, double rate) {
  const double steps = static_cast<double>(plan.spinup_steps) +
                       std::ceil(duration / spec.integration.dt - 1e-9);
  return static_cast<double>(plan.cases.size()) * static_cast<double>(members) * steps / rate /
         3600.0;
}

/// Prints `text` wrapped at 96 columns, every line indented by `indent` spaces.
void print_wrapped(const std::string& text, int indent) {
  const std::size_t width = 96 - static_cast<std::size_t>(indent);
  std::size_t start = 0;
  while (start < text.size()) {
    std::size_t end = start + width;
    if (end >= text.size()) {
      end = text.size();
    } else {
      const std::size_t space = text.rfind(' ', end);
      if (space != std::string::npos && space > start) end = space;
    }
    std::printf("%*s%s\n", indent, "", text.substr(start, end - start).c_str());
    start = end;
    while (start < text.size() && text[start] == ' ') ++start;
  }
}

/// Prints what the members of each pilot case do, and what that means for the figures below.
void print_behaviour(const spec::Spec& spec, const plan::Plan& plan, const PilotResult& r) {
  std::printf("\n  behaviour of each case (run at dt): rest = largest time sd / rms size of an\n"
              "  observable; together = largest sd across members at the end of the window / time\n"
              "  sd; growth = rms spread of the members' states at the end / at the start.\n\n");
  std::printf("  %-22s %-22s %10s %10s %10s\n", "case", "behaviour", "rest", "together", "growth");
  for (std::size_t k = 0; k < r.cases.size(); ++k) {
    const CaseVerdict& v = r.verdicts[k];
    std::printf("  %-22s %-22s %10s %10s %10s\n", case_label(spec, r.cases[k]).c_str(),
                stats::behaviour_name(v.behaviour), num(v.evidence.rest).c_str(),
                num(v.evidence.together).c_str(), num(v.evidence.growth).c_str());
  }
  for (std::size_t k = 0; k < r.cases.size(); ++k) {
    const CaseVerdict& v = r.verdicts[k];
    const std::string head = "case " + std::to_string(r.cases[k].index) + ": ";
    std::string text;
    if (v.behaviour == stats::CaseBehaviour::fixed_point) {
      text = head + "fixed point: the members rest at";
      for (std::size_t o = 0; o < v.means.size(); ++o) {
        char value[40];
        std::snprintf(value, sizeof value, "%.10g", v.means[o]);
        text += std::string(o == 0 ? " " : ", ") + plan.observables[o] + " " + value;
      }
      text += " (ensemble time means). Nothing varies, so there is no decorrelation time, "
              "half-width or sampling error to plan for.";
    } else if (v.behaviour == stats::CaseBehaviour::together) {
      text = head + "periodic or collapsed: the members move as one (their spread at the end "
             "of the window is " + num(v.evidence.together) + " of their time variation): a "
             "periodic orbit or a slow approach to a fixed point followed at the same phase, or "
             "a pilot too short for their differences to grow. Their time means are not "
             "independent samples, so no decorrelation time, half-width or members x duration "
             "follows from them.";
    } else if (v.behaviour == stats::CaseBehaviour::independent) {
      text = head + "independent: the members spread like independent samples but started far "
             "apart (their spread grew " + num(v.evidence.growth) + " times), so the pilot cannot "
             "tell chaos from a regular motion visited at random phases; for a regular motion "
             "the half-widths below shrink faster with the duration than they assume.";
    } else {
      continue;
    }
    print_wrapped(text, 2);
  }
}

/// Prints the dt comparison; returns true when dt was flagged.
bool print_dt_adequacy(const spec::Spec& spec, const plan::Plan& plan, const PilotResult& r,
                       int members) {
  const double threshold = stats::flag_threshold(static_cast<int>(r.rows.size()), members);
  std::printf("\n  dt adequacy: ensemble time means at dt %g and dt/2 %g (same members, same\n"
              "  initial states, same model time); difference = mean(dt) - mean(dt/2) over the\n"
              "  paired members, se its standard error sd(member differences)/sqrt(n). Rule: dt\n"
              "  is too coarse when |difference| > %.3g se (Student t, n-1 = %d d.o.f., 1%% for\n"
              "  all %zu comparisons together, Bonferroni) and > floor = 1e-6 x rms size + dt x\n"
              "  time sd / T (what sampling the same window at dt and dt/2 allows; it decides\n"
              "  when the members coincide and se falls to rounding).\n\n",
              spec.integration.dt, spec.integration.dt / 2, threshold, members - 1,
              r.rows.size());
  std::printf("  %-22s %-12s %12s %12s %12s %10s %7s %10s  %s\n", "case", "observable", "mean(dt)",
              "mean(dt/2)", "difference", "se", "|d|/se", "floor", "verdict");
  bool flagged = false;
  std::string worst;
  for (const Row& row : r.rows) {
    const stats::PairedDifference& d = row.dt_change;
    const double ratio = std::abs(d.difference) / d.stderr_;
    const double tolerance = std::max(threshold * d.stderr_, row.dt_floor);
    const bool coarse = std::abs(d.difference) > tolerance;
    flagged = flagged || coarse;
    const std::string& name = plan.observables[row.observable];
    if (coarse && (", " + worst + ", ").find(", " + name + ", ") == std::string::npos) {
      worst += (worst.empty() ? "" : ", ") + name;
    }
    std::printf("  %-22s %-12s %12s %12s %12s %10s %7s %10s  %s\n",
                case_label(spec, r.cases[row.case_slot]).c_str(),
                plan.observables[row.observable].c_str(), num(d.mean_a).c_str(),
                num(d.mean_b).c_str(), num(d.difference).c_str(), num(d.stderr_).c_str(),
                num(ratio).c_str(), num(row.dt_floor).c_str(),
                !std::isfinite(d.difference) || !std::isfinite(tolerance) ? "?"
                : coarse                                                  ? "TOO COARSE"
                                                                          : "ok");
  }
  if (flagged) {
    std::printf("  dt %g: too coarse (the time means of %s change by more than their statistical "
                "error and the floor when dt is halved); try dt %g\n",
                spec.integration.dt, worst.c_str(), spec.integration.dt / 2);
  } else {
    std::printf("  dt %g: adequate at the pilot's precision (no |difference| above both %.3g se "
                "and the floor)\n",
                spec.integration.dt, threshold);
  }
  return flagged;
}

bool any_usable(const PilotResult& r) {
  return std::any_of(r.verdicts.begin(), r.verdicts.end(),
                     [](const CaseVerdict& v) { return v.usable(); });
}

/// W = T Var_m per observable, the largest over the pilot cases whose members vary
/// independently (the cases between are not piloted; the largest is the cautious choice for
/// them). Cases at a fixed point or whose members move as one have no sampling W.
std::vector<double> largest_w(const PilotResult& r, std::size_t n_obs) {
  std::vector<double> w(n_obs, 0.0);
  for (const Row& row : r.rows) {
    if (!r.verdicts[row.case_slot].usable()) continue;
    const double v = row.decorrelation.variance_time();
    if (std::isfinite(v)) w[row.observable] = std::max(w[row.observable], v);
  }
  return w;
}

/// Parses a target option: "X" (every observable) or "NAME=X,NAME=X,..." Returns one target per
/// observable, 0 where none was asked for. Throws UsageError for a bad value or name.
std::vector<double> parse_targets(const std::string& text, const std::vector<std::string>& names,
                                  const char* option) {
  std::vector<double> targets(names.size(), 0.0);
  if (text.empty()) return targets;
  auto value = [&](const std::string& s) {
    std::size_t used = 0;
    double v = 0.0;
    try {
      v = std::stod(s, &used);
    } catch (const std::exception&) {
      used = 0;
    }
    if (used != s.size() || !(v > 0.0) || !std::isfinite(v)) {
      throw UsageError(std::string(option) + ": `" + s + "` is not a positive number");
    }
    return v;
  };
  if (text.find('=') == std::string::npos) {
    std::fill(targets.begin(), targets.end(), value(text));
    return targets;
  }
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t end = std::min(text.find(',', start), text.size());
    const std::string item = text.substr(start, end - start);
    const std::size_t eq = item.find('=');
    const std::string name = item.substr(0, eq);
    const auto it = std::find(names.begin(), names.end(), name);
    if (eq == std::string::npos || it == names.end()) {
      throw UsageError(std::string(option) + ": `" + item +
                       "` is not OBSERVABLE=HALFWIDTH for an observable of the spec");
    }
    targets[static_cast<std::size_t>(it - names.begin())] = value(item.substr(eq + 1));
    start = end + 1;
  }
  return targets;
}

bool any_target(const std::vector<double>& targets) {
  return std::any_of(targets.begin(), targets.end(), [](double x) { return x > 0.0; });
}

/// One precision the campaign must reach: a 95% half-width `target` on a quantity whose
/// variance per unit of averaging time is `w`.
struct Requirement {
  std::string what;  // "case mean of x", "slope of x on forcing"
  double w = 0.0;
  double target = 0.0;
};

void print_precision(const spec::Spec& spec, const plan::Plan& plan, const PilotResult& r,
                     const std::vector<double>& targets, std::vector<std::string>& warnings) {
  const double t_spec = static_cast<double>(plan.accumulate_steps) * spec.integration.dt;
  const std::int64_t n_spec = plan.members;
  const bool target = any_target(targets);
  std::printf("\n  decorrelation and precision of the case means: tau = T Var_m / (2 s2) from the\n"
              "  dt run (T = %g, Var_m the variance of the members' time means, s2 their mean\n"
              "  time variance); half-width = t_{0.975,n-1} sqrt(2 tau s2 / (n T)) for the\n"
              "  spec's n = %lld members over T = %g",
              r.window, static_cast<long long>(n_spec), t_spec);
  if (target) std::printf("; members (at that T) and T (at those n) for the target");
  std::printf(".\n\n  %-22s %-12s %10s %21s %10s %12s", "case", "observable", "tau",
              "tau 95% interval", "s2", "half-width");
  if (target) std::printf(" %10s %12s %12s", "target", "members", "duration");
  std::printf("\n");
  for (const Row& row : r.rows) {
    const stats::Decorrelation& d = row.decorrelation;
    const double w = d.variance_time();
    const std::string name = plan.observables[row.observable];
    const CaseVerdict& verdict = r.verdicts[row.case_slot];
    if (!verdict.usable()) {
      std::printf("  %-22s %-12s %10s %21s %10s %12s  (%s: none)\n",
                  case_label(spec, r.cases[row.case_slot]).c_str(), name.c_str(), "-", "-",
                  num(d.time_variance).c_str(), "-", stats::behaviour_name(verdict.behaviour));
      continue;
    }
    std::printf("  %-22s %-12s %10s %21s %10s %12s", case_label(spec, r.cases[row.case_slot]).c_str(),
                name.c_str(), num(d.tau).c_str(),
                ("[" + num(d.tau_low) + ", " + num(d.tau_high) + "]").c_str(),
                num(d.time_variance).c_str(), num(stats::mean_halfwidth(w, n_spec, t_spec)).c_str());
    const double x = targets[row.observable];
    if (target && x > 0.0) {
      std::printf(" %10s %12s %12s", num(x).c_str(),
                  count_text(stats::members_needed(w, t_spec, x)).c_str(),
                  num(stats::duration_needed(w, n_spec, x)).c_str());
    }
    std::printf("\n");
    if (std::isfinite(d.tau) && r.window < kWindowsPerTau * d.tau) {
      warnings.push_back("the pilot window " + num(r.window) + " is under " +
                         num(kWindowsPerTau) + " decorrelation times of " + name + " (tau " +
                         num(d.tau) + " in case " + std::to_string(r.cases[row.case_slot].index) +
                         "): its figures are rough; raise --pilot-duration");
    }
  }
}

/// W of each response slope, [axis][observable]: the slope is a fixed linear combination
/// sum_c a_c y_c of the case means (least squares over all the spec's cases), so its variance
/// per unit time is sum_c a_c^2 W_c, with W_c the largest pilot W of the observable for every
/// case. response_slopes() with y = 0 and y_se = sqrt(W) returns exactly sqrt(sum_c a_c^2 W).
std::vector<std::vector<double>> slope_w(const plan::Plan& plan, const PilotResult& r,
                                         std::size_t axes) {
  std::vector<std::vector<double>> x;
  for (const plan::Case& c : plan.cases) x.push_back(c.axis_values);
  const std::vector<double> zero(plan.cases.size(), 0.0);
  const std::vector<double> w = largest_w(r, plan.observables.size());
  std::vector<std::vector<double>> out(axes, std::vector<double>(w.size()));
  for (std::size_t o = 0; o < w.size(); ++o) {
    const std::vector<double> se(plan.cases.size(), std::sqrt(w[o]));
    const std::vector<stats::Slope> unit = stats::response_slopes(x, zero, se);
    for (std::size_t a = 0; a < axes; ++a) out[a][o] = unit[a].stderr_ * unit[a].stderr_;
  }
  return out;
}

void print_slopes(const spec::Spec& spec, const plan::Plan& plan, const PilotResult& r,
                  const std::vector<double>& targets) {
  if (spec.sweep.empty()) return;
  const double t_spec = static_cast<double>(plan.accumulate_steps) * spec.integration.dt;
  const std::int64_t n_spec = plan.members;
  const bool target = any_target(targets);
  if (!any_usable(r)) {
    std::printf("\n  response slopes: no pilot case has members that vary independently; their\n"
                "  sampling error cannot be estimated from this pilot.\n");
    return;
  }
  const std::vector<std::vector<double>> ws = slope_w(plan, r, spec.sweep.size());
  std::printf("\n  response slopes: least squares over all %zu cases, each case's sampling\n"
              "  error taken from the pilot case where it is largest; half-width for the spec's\n"
              "  n = %lld members over T = %g",
              plan.cases.size(), static_cast<long long>(n_spec), t_spec);
  if (target) std::printf("; members and duration for the target");
  std::printf(".\n\n  %-22s %-12s %12s", "axis", "observable", "half-width");
  if (target) std::printf(" %10s %12s %12s", "target", "members", "duration");
  std::printf("\n");
  for (std::size_t a = 0; a < spec.sweep.size(); ++a) {
    for (std::size_t o = 0; o < plan.observables.size(); ++o) {
      const double w = ws[a][o];
      std::printf("  %-22s %-12s %12s", spec.sweep[a].parameter.c_str(),
                  plan.observables[o].c_str(), num(stats::mean_halfwidth(w, n_spec, t_spec)).c_str());
      if (target && targets[o] > 0.0) {
        std::printf(" %10s %12s %12s", num(targets[o]).c_str(),
                    count_text(stats::members_needed(w, t_spec, targets[o])).c_str(),
                    num(stats::duration_needed(w, n_spec, targets[o])).c_str());
      }
      std::printf("\n");
    }
  }
}

/// The requirements of the campaign: for every observable with a target, its case mean in
/// every case (the largest pilot W) and its slope on every axis.
std::vector<Requirement> requirements(const spec::Spec& spec, const plan::Plan& plan,
                                      const PilotResult& r, const std::vector<double>& mean_targets,
                                      const std::vector<double>& slope_targets) {
  std::vector<Requirement> out;
  const std::vector<double> w = largest_w(r, plan.observables.size());
  for (std::size_t o = 0; o < w.size(); ++o) {
    if (mean_targets[o] > 0.0) out.push_back({"case mean of " + plan.observables[o], w[o], mean_targets[o]});
  }
  if (spec.sweep.empty()) return out;
  const std::vector<std::vector<double>> ws = slope_w(plan, r, spec.sweep.size());
  for (std::size_t a = 0; a < ws.size(); ++a) {
    for (std::size_t o = 0; o < w.size(); ++o) {
      if (slope_targets[o] > 0.0 && std::isfinite(ws[a][o])) {
        out.push_back({"slope of " + plan.observables[o] + " on " + spec.sweep[a].parameter,
                       ws[a][o], slope_targets[o]});
      }
    }
  }
  return out;
}

/// Members at the spec's duration and duration at the spec's members that meet every
/// requirement, each decided by the most demanding one, with the campaign's core-hours.
void print_suggestion(const spec::Spec& spec, const plan::Plan& plan, const PilotResult& r,
                      const std::vector<Requirement>& needs, double rate,
                      std::vector<std::string>& warnings) {
  const double t_spec = static_cast<double>(plan.accumulate_steps) * spec.integration.dt;
  const std::int64_t n_spec = plan.members;
  std::int64_t members = 0;
  double duration = 0.0;
  std::string members_by, duration_by;
  for (const Requirement& q : needs) {
    const std::int64_t n = stats::members_needed(q.w, t_spec, q.target);
    if (n < 0 || (members >= 0 && n > members)) {
      members = n;
      members_by = q.what;
    }
    const double t = stats::duration_needed(q.w, n_spec, q.target);
    if (!(t <= duration)) {
      duration = t;
      duration_by = q.what;
    }
  }
  std::printf("  to reach every target:\n");
  if (members < 0) {
    std::printf("    members at duration %g: more than 1e15 (%s)\n", t_spec, members_by.c_str());
  } else {
    std::printf("    %lld members at duration %g (the spec's): %.3g core-hours; decided by the %s\n",
                static_cast<long long>(members), t_spec, core_hours(spec, plan, members, t_spec, rate),
                members_by.c_str());
  }
  if (!std::isfinite(duration)) {
    std::printf("    no duration is enough with %lld member\n", static_cast<long long>(n_spec));
    return;
  }
  std::printf("    duration %.4g at %lld members (the spec's): %.3g core-hours; decided by the %s\n",
              duration, static_cast<long long>(n_spec), core_hours(spec, plan, n_spec, duration, rate),
              duration_by.c_str());
  double tau = 0.0;
  for (const Row& row : r.rows) {
    if (r.verdicts[row.case_slot].usable() && std::isfinite(row.decorrelation.tau)) {
      tau = std::max(tau, row.decorrelation.tau);
    }
  }
  if (duration < kWindowsPerTau * tau) {
    warnings.push_back("a duration of " + num(duration) + " is under " + num(kWindowsPerTau) +
                       " decorrelation times (tau up to " + num(tau) +
                       "): the half-width formula assumes a window much longer than tau");
  }
}

/// The largest half-width the spec as written reaches, and where.
void print_as_written(const spec::Spec& spec, const plan::Plan& plan, const PilotResult& r,
                      double rate) {
  const double t_spec = static_cast<double>(plan.accumulate_steps) * spec.integration.dt;
  const std::int64_t n_spec = plan.members;
  std::printf("  as written, %lld members x duration %g: %.3g core-hours\n",
              static_cast<long long>(n_spec), t_spec, core_hours(spec, plan, n_spec, t_spec, rate));
  if (!any_usable(r)) {
    std::printf("    no sampling half-width: no pilot case has members that vary independently\n");
    return;
  }
  const std::vector<double> w = largest_w(r, plan.observables.size());
  std::printf("    case-mean half-width in the worst pilot case:");
  for (std::size_t o = 0; o < w.size(); ++o) {
    std::printf(" %s %s", plan.observables[o].c_str(),
                num(stats::mean_halfwidth(w[o], n_spec, t_spec)).c_str());
  }
  std::printf("\n");
  if (spec.sweep.empty()) return;
  const std::vector<std::vector<double>> ws = slope_w(plan, r, spec.sweep.size());
  for (std::size_t a = 0; a < ws.size(); ++a) {
    std::printf("    slope half-width on %s:", spec.sweep[a].parameter.c_str());
    for (std::size_t o = 0; o < w.size(); ++o) {
      std::printf(" %s %s", plan.observables[o].c_str(),
                  num(stats::mean_halfwidth(ws[a][o], n_spec, t_spec)).c_str());
    }
    std::printf("\n");
  }
}

}  // namespace

void check_pilot_options(const spec::Spec& spec, const plan::Plan& plan,
                         const PilotOptions& options) {
  if (spec.schedule.kind != spec::ScheduleKind::none) {
    throw UsageError("--pilot: " + spec.source_path +
                     " has a schedule; a pilot over a shortened window would measure other "
                     "time means, so this version does not run one");
  }
  parse_targets(options.target_halfwidth, plan.observables, "--target-halfwidth");
  parse_targets(options.target_slope_halfwidth, plan.observables, "--target-slope-halfwidth");
  if (!options.target_slope_halfwidth.empty() && spec.sweep.empty()) {
    throw UsageError("--target-slope-halfwidth needs a sweep: " + spec.source_path +
                     " has one case and no response slope");
  }
  const double duration =
      options.duration > 0 ? options.duration : spec.integration.duration / 10;
  if (plan::whole_steps(duration, spec.integration.dt) < 2) {
    throw UsageError("the pilot duration " + num(duration) + " is under two steps of dt " +
                     num(spec.integration.dt) + "; give a longer --pilot-duration");
  }
}

void run_pilot(const spec::Spec& spec, const plan::Plan& plan, const PilotOptions& options,
               double rate) {
  check_pilot_options(spec, plan, options);
  const std::vector<double> mean_targets =
      parse_targets(options.target_halfwidth, plan.observables, "--target-halfwidth");
  const std::vector<double> slope_targets =
      parse_targets(options.target_slope_halfwidth, plan.observables, "--target-slope-halfwidth");
  const PilotResult r = run_all(spec, plan, options, rate);
  std::vector<std::string> warnings;
  std::printf("\npilot: %zu of %zu cases, %d members each, spin-up %g + duration %g (the spec: "
              "%g), at dt and dt/2; %.2g s\n",
              r.cases.size(), plan.cases.size(), options.members,
              static_cast<double>(plan.spinup_steps) * spec.integration.dt, r.window,
              spec.integration.duration, r.seconds);
  if (r.non_finite > 0) {
    warnings.push_back(std::to_string(r.non_finite) +
                       " pilot member runs became non-finite and were left out");
  }
  print_behaviour(spec, plan, r);
  const bool coarse = print_dt_adequacy(spec, plan, r, options.members);
  print_precision(spec, plan, r, mean_targets, warnings);
  print_slopes(spec, plan, r, slope_targets);
  std::printf("\n  campaign (%zu cases, %.3g member-steps/s per core):\n", plan.cases.size(), rate);
  print_as_written(spec, plan, r, rate);
  const std::vector<Requirement> needs = requirements(spec, plan, r, mean_targets, slope_targets);
  if (!needs.empty() && any_usable(r)) {
    print_suggestion(spec, plan, r, needs, rate, warnings);
  } else if (!needs.empty()) {
    std::printf("  to reach every target: nothing to plan from this pilot. A fixed point's time means\n"
                "  are exact at any members and duration; members that move as one share one time\n"
                "  mean, whose error is the window's cut through the motion (it shrinks like 1/T),\n"
                "  not a sampling error that more members would reduce.\n");
  }
  if (any_usable(r) && !std::all_of(r.verdicts.begin(), r.verdicts.end(),
                                    [](const CaseVerdict& v) { return v.usable(); })) {
    warnings.push_back("the half-widths and suggestions above come from the pilot cases whose "
                       "members vary independently only");
  }
  if (coarse) warnings.push_back("dt is too coarse: every figure above is for a biased model");
  for (const std::string& w : warnings) std::printf("  warning: %s\n", w.c_str());
}

}  // namespace chaosweep::app
