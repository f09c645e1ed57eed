// `chaosweep slurm`: writes a Slurm batch script that runs a campaign, stops it with a
// checkpoint on the scheduler's warning signal and requeues itself until the campaign is
// complete. The script text is slurm/template.sh, compiled into the program (see
// slurm_template_text); this file only checks the options and fills in the template's fields.
#include <sys/stat.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <regex>
#include <sstream>
#include <string>
#include <string_view>

#include "app/commands.hpp"
#include "core/bytes_text.hpp"
#include "core/error.hpp"
#include "plan/plan.hpp"
#include "spec/load.hpp"

namespace chaosweep::app {

/// The texts of slurm/template.sh, merge.sh and submit.sh (generated at configure time from
/// those files).
std::string_view slurm_template_text();
std::string_view slurm_merge_text();
std::string_view slurm_submit_text();

namespace {

namespace fs = std::filesystem;

/// Seconds between the warning signal and the time limit when --signal-margin is not given:
/// a fixed part plus twice the estimated checkpoint write time at a modest file-system speed.
/// The fixed part covers the signal's timing (Slurm checks time limits on a 30 s cycle, and a
/// busy controller may be later still), the run's stop at its next step chunk, the teardown
/// of the job step and the requeue request.
constexpr int kMarginFixedSeconds = 120;
/// Further launches the script tries when the launcher ends with status 0 but the run wrote no
/// archive (a job step whose tasks failed to start).
constexpr int kLaunchRetries = 2;
constexpr double kCheckpointBytesPerSecond = 50e6;
constexpr int kMinMarginSeconds = 60;
constexpr int kMaxMarginSeconds = 65535;  // Slurm stores the warning time in 16 bits
/// Run time the limit must leave before the warning. Slurm sends the warning up to about 30 s
/// earlier than asked (its time-limit check runs on a 30 s cycle), so an attempt then still
/// gets at least 30 s of work done before it is stopped.
constexpr int kSignalEarlySeconds = 60;

/// Time limit in seconds from [D-]HH:MM:SS, rounded up to whole minutes as Slurm does.
/// Throws UsageError naming the option for anything else.
long parse_time_limit(const std::string& text) {
  static const std::regex form(R"(^(?:(\d{1,3})-)?(\d{1,5}):(\d{2}):(\d{2})$)");
  std::smatch m;
  if (!std::regex_match(text, m, form)) {
    throw UsageError("--time: `" + text + "` is not a time limit of the form HH:MM:SS or D-HH:MM:SS");
  }
  const long days = m[1].matched ? std::stol(m[1].str()) : 0;
  const long hours = std::stol(m[2].str());
  const long minutes = std::stol(m[3].str());
  const long seconds = std::stol(m[4].str());
  if (minutes >= 60 || seconds >= 60 || (m[1].matched && hours >= 24)) {
    throw UsageError("--time: `" + text + "` has minutes, seconds or (with days) hours out of range");
  }
  const long total = ((days * 24 + hours) * 60 + minutes) * 60 + seconds;
  if (total <= 0) throw UsageError("--time: the time limit must be longer than zero");
  return (total + 59) / 60 * 60;
}

/// A value that goes into an #SBATCH line or a Slurm file-name pattern unquoted.
void check_sbatch_word(const std::string& option, const std::string& value, bool allow_slash) {
  if (value.empty()) throw UsageError(option + ": must not be empty");
  for (const char c : value) {
    const bool ok = std::isalnum(static_cast<unsigned char>(c)) || c == '_' || c == '-' ||
                    c == '.' || c == ',' || c == '+' || c == ':' || c == '=' || c == '@' ||
                    (allow_slash && c == '/');
    if (!ok) {
      throw UsageError(option + ": `" + value + "` contains `" + std::string(1, c) +
                       "`, which cannot be written into an #SBATCH line");
    }
  }
}

/// Single-quoted for bash: any text, a quote written as '\''.
std::string shell_quote(const std::string& text) {
  std::string out = "'";
  for (const char c : text) out += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return out + "'";
}

/// The campaign name as a Slurm job name: letters, digits, '.', '_' and '-' kept, others '-'.
std::string job_name(const std::string& campaign) {
  std::string out;
  for (const char c : campaign) {
    const bool keep = std::isalnum(static_cast<unsigned char>(c)) || c == '.' || c == '_' || c == '-';
    out += keep ? c : '-';
  }
  return out.empty() ? std::string("chaosweep") : out;
}

/// Bytes of a checkpoint of the whole campaign, estimated from the plan. Per member, at the
/// full batch width: the current and initial states and the integrator's work space (about
/// 4 x state), about 4 accumulators per observable and per regime, a histogram and a few
/// counters; plus the stored trajectories. Matches the checkpoints of the Lorenz-63 test
/// campaigns (about 80 doubles per member) to within 10%; good to a factor of two in general.
double checkpoint_bytes_estimate(const spec::Spec& spec, const plan::Plan& plan) {
  const double histogram = spec.statistics.histogram.enabled ? spec.statistics.histogram.bins : 0;
  const double per_member = 4.0 * plan.state_dim + 4.0 * plan.observables.size() +
                            4.0 * plan.regime_labels.size() + histogram + 8.0;
  const double members = static_cast<double>(plan.batch_count()) * plan.batch_size;
  const double trajectories = static_cast<double>(plan.cases.size()) * plan.trajectory_members *
                              plan.trajectory_samples * plan.state_dim;
  return 8.0 * (members * per_member + trajectories);
}


struct Margin {
  int seconds = 0;
  std::string reason;  // one line for the script's header comment
};

Margin signal_margin(const SlurmOptions& options, const spec::Spec& spec, long limit_seconds) {
  Margin margin;
  if (options.signal_margin != -1) {
    if (options.signal_margin < kMinMarginSeconds || options.signal_margin > kMaxMarginSeconds) {
      throw UsageError("--signal-margin: must be between " + std::to_string(kMinMarginSeconds) +
                       " and " + std::to_string(kMaxMarginSeconds) + " seconds");
    }
    margin.seconds = options.signal_margin;
    margin.reason = "set with --signal-margin";
  } else {
    const double bytes = checkpoint_bytes_estimate(spec, plan::make_plan(spec));
    // Twice the write time, in whole 10 s steps (a write under a second adds nothing).
    const double write = 2.0 * bytes / kCheckpointBytesPerSecond;
    const double extra = write < 1.0 ? 0.0 : std::ceil(write / 10.0) * 10.0;
    margin.seconds = static_cast<int>(std::min<double>(kMarginFixedSeconds + extra, kMaxMarginSeconds));
    margin.reason = std::to_string(kMarginFixedSeconds) + " s + twice the write time of a " +
                    bytes_text(bytes) + " checkpoint at 50 MB/s";
  }
  if (limit_seconds < margin.seconds + kSignalEarlySeconds) {
    throw UsageError("--time: a limit of " + std::to_string(limit_seconds) +
                     " s leaves less than " + std::to_string(kSignalEarlySeconds) +
                     " s of run time before the warning signal sent " +
                     std::to_string(margin.seconds) + " s before the limit (" + margin.reason +
                     "); raise --time or lower --signal-margin");
  }
  return margin;
}

/// The command line that reproduces this script, for its header comment.
std::string command_line(const SlurmOptions& o, const std::string& spec_path,
                         const std::string& site_path, const Margin& margin) {
  std::ostringstream out;
  out << "chaosweep slurm " << spec_path << " --nodes " << o.nodes << " --tasks-per-node "
      << o.tasks_per_node << " --time " << o.time;
  if (!o.partition.empty()) out << " --partition " << o.partition;
  if (!o.account.empty()) out << " --account " << o.account;
  out << " --max-requeues " << o.max_requeues << " --launcher " << o.launcher;
  if (!site_path.empty()) out << " --site " << site_path;
  out << " --signal-margin " << margin.seconds;
  if (o.parts > 0) out << " --parts " << o.parts << " --script " << o.script;
  std::string text = out.str();
  for (char& c : text) {
    if (c == '\n' || c == '\r') c = ' ';
  }
  return text;
}

/// Replaces every {{FIELD}} of the template. A line that holds only a field whose value is
/// empty is dropped. Throws if the template names a field that has no value.
std::string fill_template(std::string_view text, const std::map<std::string, std::string>& fields) {
  std::string out;
  std::istringstream lines{std::string(text)};
  std::string line;
  while (std::getline(lines, line)) {
    std::string filled;
    std::size_t pos = 0;
    while (true) {
      const std::size_t open = line.find("{{", pos);
      if (open == std::string::npos) break;
      const std::size_t close = line.find("}}", open);
      if (close == std::string::npos) break;
      const std::string name = line.substr(open + 2, close - open - 2);
      const auto field = fields.find(name);
      if (field == fields.end()) {
        throw Error("batch-script template: unknown field {{" + name + "}}");
      }
      filled += line.substr(pos, open - pos) + field->second;
      pos = close + 2;
    }
    filled += line.substr(pos);
    const bool lone_field = line.size() > 4 && line.rfind("{{", 0) == 0 &&
                            line.find("}}") == line.size() - 2;
    if (lone_field && filled.empty()) continue;
    out += filled + "\n";
  }
  return out;
}

std::string placement_lines(const SlurmOptions& options) {
  std::string lines;
  if (!options.partition.empty()) lines += "#SBATCH --partition=" + options.partition;
  if (!options.account.empty()) {
    if (!lines.empty()) lines += "\n";
    lines += "#SBATCH --account=" + options.account;
  }
  return lines;
}

std::string absolute_existing_file(const std::string& option, const std::string& path) {
  std::error_code ec;
  if (!fs::is_regular_file(path, ec)) {
    throw UsageError(option + ": `" + path + "` is not a readable file");
  }
  return fs::canonical(path).string();
}

void write_script(const std::string& path, const std::string& script) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  if (!out) throw UsageError("--script: cannot write `" + path + "`");
  out << script;
  out.close();
  if (!out) throw IoError("--script: writing `" + path + "` failed");
  chmod(path.c_str(), 0755);
}

/// --parts needs --script (three files are written) and at most one part per batch.
void check_parts(const SlurmOptions& options, const spec::Spec& spec) {
  if (options.parts < 1) throw UsageError("--parts: must be 1 or more");
  if (options.script.empty()) {
    throw UsageError("--parts: needs --script FILE (the job array's script; the merge job's and "
                     "the submitting script are written beside it)");
  }
  const std::int64_t batches = plan::make_plan(spec).batch_count();
  if (options.parts > batches) {
    throw UsageError("--parts: " + std::to_string(options.parts) +
                     " parts, but the campaign has only " + std::to_string(batches) +
                     " batches; use at most " + std::to_string(batches) + " parts");
  }
}

/// `dir/NAME.sh` -> `dir/NAME-<what>.sh`.
std::string sibling(const std::string& script, const std::string& what) {
  const fs::path p(script);
  return (p.parent_path() / (p.stem().string() + "-" + what + p.extension().string())).string();
}

/// The job array's script (the template with one part per task), the merge job's and the
/// script that submits both with the dependency.
void write_array_scripts(const SlurmOptions& options, const std::string& archive,
                         std::map<std::string, std::string> fields) {
  const std::string n = std::to_string(options.parts);
  // part I's archive, as `run --part I/N` names it: NAME.part-I-of-N.EXT beside the archive
  const fs::path a(archive);
  const std::string prefix = (a.parent_path() / (a.stem().string() + ".part-")).string();
  const std::string suffix = "-of-" + n + a.extension().string();
  const auto part_archive = [&](const std::string& index) {
    return shell_quote(prefix) + "\"$" + index + "\"" + shell_quote(suffix);
  };
  const std::string array_path = options.script, merge_path = sibling(options.script, "merge"),
                    submit_path = sibling(options.script, "submit");
  const std::string array_name = fs::path(array_path).filename().string(),
                    merge_name = fs::path(merge_path).filename().string();
  const std::string workdir = fields.at("WORKDIR"), name = fields.at("JOB_NAME");

  fields["ARRAY_NOTE"] =
      "# Job array: task I (1 to " + n + ") runs part I of " + n + " of the campaign (`chaosweep "
      "run --part I/" + n + "`)\n# into the part archive " + prefix + "I" + suffix +
      ",\n# checkpointing beside it; each task stops, requeues and resumes like a single job. "
      "The merge\n# job (" + merge_name + ") writes the archive from the parts; " +
      fs::path(submit_path).filename().string() + " submits both.";
  fields["SBATCH_ARRAY"] = "#SBATCH --array=1-" + n;
  fields["LOG"] = workdir + "/" + name + "-%A_%a.log";
  fields["PART_LINES"] =
      "part_index=${SLURM_ARRAY_TASK_ID:?is not set: this script runs as a job array, one part "
      "per task (sbatch --array=1-" + n + ")}\nwhat=\"part $part_index of " + n + "\"";
  fields["ARCHIVE_QUOTED"] = part_archive("part_index");
  fields["PART_FLAGS"] =
      "part_flags=(--part \"$part_index/" + n + "\" --archive \"$archive\")";
  write_script(array_path, fill_template(slurm_template_text(), fields));

  fields["PARTS"] = n;
  fields["SUBMIT_NAME"] = fs::path(submit_path).filename().string();
  fields["ARCHIVE_QUOTED"] = shell_quote(archive);
  fields["PART_ARCHIVE"] = part_archive("i");
  fields["LOG"] = workdir + "/" + name + "-merge-%j.log";
  fields["LAUNCH"] = options.launcher == "srun" ? "srun --mpi=pmix -n 1" : "mpirun -np 1";
  write_script(merge_path, fill_template(slurm_merge_text(), fields));

  fs::path dir = fs::path(array_path).parent_path();
  if (dir.empty()) dir = ".";
  std::string here = fs::absolute(dir).lexically_normal().string();
  if (here.size() > 1 && here.back() == '/') here.pop_back();
  fields["DIR_QUOTED"] = shell_quote(here);
  fields["ARRAY_NAME"] = shell_quote(array_name);
  fields["MERGE_NAME"] = shell_quote(merge_name);
  fields["ARRAY_LOGS"] = workdir + "/" + name + "-${array}_I.log";
  fields["MERGE_LOG"] = workdir + "/" + name + "-merge-${merge}.log";
  write_script(submit_path, fill_template(slurm_submit_text(), fields));

  const std::string run_submit =
      submit_path.find('/') == std::string::npos ? "./" + submit_path : submit_path;
  std::printf("wrote %s (job array of %d parts), %s (merge job) and %s: submit both with `%s`\n",
              array_path.c_str(), options.parts, merge_path.c_str(), submit_path.c_str(),
              run_submit.c_str());
  if (options.parts > 1000) {
    std::fprintf(stderr, "chaosweep: warning: --parts %d: array indices above 1000 exceed "
                         "Slurm's default MaxArraySize (1001); see `scontrol show config`\n",
                 options.parts);
  }
}

}  // namespace

int slurm_command(const SlurmOptions& options) {
  const spec::Spec spec = spec::load_spec(options.spec_path);
  if (options.parts != 0) check_parts(options, spec);
  const long limit_seconds = parse_time_limit(options.time);
  if (!options.partition.empty()) check_sbatch_word("--partition", options.partition, false);
  if (!options.account.empty()) check_sbatch_word("--account", options.account, false);
  if (options.max_requeues < 0) throw UsageError("--max-requeues: must be 0 or more");
  const Margin margin = signal_margin(options, spec, limit_seconds);

  const std::string spec_path = fs::canonical(options.spec_path).string();
  const std::string site_path =
      options.site_file.empty() ? "" : absolute_existing_file("--site", options.site_file);
  const std::string workdir = fs::current_path().string();
  check_sbatch_word("the working directory", workdir, true);
  const std::string name = job_name(spec.name);
  const std::string program = fs::read_symlink("/proc/self/exe").string();
  const bool srun = options.launcher == "srun";
  // The script checks for the archive to tell a run that took place from a launch that did
  // not start the tasks; the spec's relative path is taken from the working directory.
  const std::string archive = (fs::path(workdir) / spec.output.archive).lexically_normal().string();

  std::map<std::string, std::string> fields = {
      {"CAMPAIGN", spec.name},
      {"COMMAND_LINE", command_line(options, spec_path, site_path, margin)},
      {"MARGIN", std::to_string(margin.seconds)},
      {"MARGIN_REASON", margin.reason},
      {"MAX_REQUEUES", std::to_string(options.max_requeues)},
      {"JOB_NAME", name},
      {"NODES", std::to_string(options.nodes)},
      {"TASKS_PER_NODE", std::to_string(options.tasks_per_node)},
      {"TIME", options.time},
      {"SBATCH_PLACEMENT", placement_lines(options)},
      {"WORKDIR", workdir},
      {"WORKDIR_QUOTED", shell_quote(workdir)},
      {"LOG", workdir + "/" + name + "-%j.log"},
      {"SITE_SOURCE", site_path.empty() ? "# (none given: chaosweep slurm --site FILE)"
                                        : "source " + shell_quote(site_path)},
      {"CHAOSWEEP", shell_quote(program)},
      {"SPEC", shell_quote(spec_path)},
      {"LAUNCHER_NAME", options.launcher},
      {"ARCHIVE_QUOTED", shell_quote(archive)},
      {"LAUNCH_RETRIES", std::to_string(kLaunchRetries)},
      {"LAUNCH", srun ? "srun --mpi=pmix" : "mpirun -np \"$SLURM_NTASKS\""},
      {"ARRAY_NOTE", ""},
      {"SBATCH_ARRAY", ""},
      {"PART_LINES", "what=campaign"},
      {"PART_FLAGS", "part_flags=()"},
  };
  if (options.parts == 0) {
    const std::string script = fill_template(slurm_template_text(), fields);
    if (options.script.empty()) {
      std::fputs(script.c_str(), stdout);
    } else {
      write_script(options.script, script);
      std::printf("wrote %s: submit it with `sbatch %s`\n", options.script.c_str(),
                  options.script.c_str());
    }
    return kExitComplete;
  }
  write_array_scripts(options, archive, fields);
  return kExitComplete;
}

}  // namespace chaosweep::app
