// Serial reader of an archive's ensemble part (see reader.hpp).
#include "archive/reader.hpp"

#include "archive/seal.hpp"

#include <filesystem>

#include "core/error.hpp"
#include "core/version.hpp"
#include "h5/h5.hpp"

namespace chaosweep::archive {
namespace {

template <class T>
std::vector<T> read_all(const h5::Group& root, const std::string& path) {
  return root.open_dataset(path).read<T>().values;
}

template <class T>
std::vector<T> read_optional(const h5::Group& root, const std::string& path) {
  return root.has_dataset(path) ? read_all<T>(root, path) : std::vector<T>{};
}

void read_identity(const h5::Group& root, ArchiveSummary& s) {
  if (!root.has_attribute("format_version") || !root.has_attribute("spec_sha256")) {
    throw UsageError(s.path + ": not a chaosweep archive (no format_version attribute)");
  }
  s.format_version = static_cast<int>(root.int64_attribute("format_version"));
  if (s.format_version > kArchiveFormatVersion) {
    throw UsageError(s.path + ": archive format version " + std::to_string(s.format_version) +
                     " is newer than this chaosweep understands (" +
                     std::to_string(kArchiveFormatVersion) + "); use a newer chaosweep");
  }
  s.title = root.string_attribute("title");
  s.campaign = root.string_attribute("campaign");
  s.model = root.string_attribute("model");
  s.status = root.string_attribute("status");
  if (root.has_attribute("scheduled_parameter")) {
    s.scheduled_parameter = root.string_attribute("scheduled_parameter");
  }
  s.tool_version = root.string_attribute("tool_version");
  s.created_utc = root.string_attribute("created_utc");
  s.spec_sha256 = root.string_attribute("spec_sha256");
  s.ranks = root.int64_attribute("ranks");
  s.members = root.int64_attribute("members_per_case");
}

void read_content(const h5::Group& root, ArchiveSummary& s) {
  s.observables = read_all<std::string>(root, "observable");
  s.valid_members = read_all<std::int64_t>(root, "ensemble/valid_members");
  s.cases = static_cast<std::int64_t>(s.valid_members.size());
  s.effective_members = read_all<double>(root, "ensemble/effective_members");
  s.time_mean = read_all<double>(root, "ensemble/time_mean");
  s.time_mean_std = read_all<double>(root, "ensemble/time_mean_std");
  s.time_mean_ci95 = read_all<double>(root, "ensemble/time_mean_ci95");
  s.time_mean_stderr = read_optional<double>(root, "ensemble/time_mean_stderr");
  s.effective_samples = read_optional<double>(root, "ensemble/effective_samples");
  s.decorrelation_time = read_optional<double>(root, "ensemble/decorrelation_time");
  s.non_chaotic = read_optional<std::uint8_t>(root, "ensemble/non_chaotic");
  s.non_chaotic_reason = read_optional<std::string>(root, "ensemble/non_chaotic_reason");
  s.regimes = read_optional<std::string>(root, "ensemble/regime");
  s.regime_fraction = read_optional<double>(root, "ensemble/regime_fraction");
  s.regime_fraction_std = read_optional<double>(root, "ensemble/regime_fraction_std");
  s.regime_fraction_ci95 = read_optional<double>(root, "ensemble/regime_fraction_ci95");
  if (root.has_dataset("ensemble/lyapunov")) {
    s.lyapunov = read_all<double>(root, "ensemble/lyapunov");
    s.lyapunov_std = read_all<double>(root, "ensemble/lyapunov_std");
    s.lyapunov_ci95 = read_all<double>(root, "ensemble/lyapunov_ci95");
    s.exponents = static_cast<int>(read_all<std::int64_t>(root, "ensemble/exponent").size());
  }
  if (root.has_group("twins")) {
    s.twins = true;
    s.horizon = read_all<double>(root, "ensemble/horizon");
    s.horizon_std = read_all<double>(root, "ensemble/horizon_std");
    s.horizon_ci95 = read_all<double>(root, "ensemble/horizon_ci95");
    s.horizon_reached = read_all<std::int64_t>(root, "ensemble/horizon_reached");
    s.twin_pairs = read_all<std::int64_t>(root, "twins/pairs");
    s.growth_rate = read_all<double>(root, "twins/growth_rate");
    s.growth_window = read_all<double>(root, "twins/growth_window");
    s.growth_note = read_optional<std::string>(root, "twins/growth_note");
    s.horizon_median = read_optional<double>(root, "twins/horizon_median");
    s.horizon_median_ci95 = read_optional<double>(root, "twins/horizon_median_ci95");
    s.suggested_duration = read_optional<double>(root, "twins/suggested_duration");
  }
  if (root.has_dataset("snapshot/time")) {
    s.snapshot_time = read_all<double>(root, "snapshot/time");
    s.snapshot_mean = read_all<double>(root, "snapshot/mean");
    s.snapshot_variance = read_all<double>(root, "snapshot/variance");
  }
  if (root.has_group("response")) {
    s.axes = read_all<std::string>(root, "response/axis");
    s.slope = read_all<double>(root, "response/slope");
    s.slope_stderr = read_all<double>(root, "response/slope_stderr");
    for (const std::string& axis : s.axes) s.axis_values.push_back(read_all<double>(root, "case/" + axis));
  }
}

/// Shapes must agree with each other, or the file is not one this tool wrote.
void check_shapes(const ArchiveSummary& s) {
  const std::size_t cases = static_cast<std::size_t>(s.cases), n_obs = s.observables.size();
  bool ok = s.time_mean.size() == cases * n_obs && s.time_mean_ci95.size() == 2 * cases * n_obs &&
            s.effective_members.size() == cases && s.time_mean_std.size() == cases * n_obs &&
            s.regime_fraction.size() == cases * s.regimes.size() &&
            s.slope.size() == s.axes.size() * n_obs &&
            s.lyapunov.size() == cases * static_cast<std::size_t>(s.exponents) &&
            s.lyapunov_ci95.size() == 2 * s.lyapunov.size() &&
            s.snapshot_mean.size() == cases * s.snapshot_time.size() * n_obs &&
            s.snapshot_variance.size() == s.snapshot_mean.size();
  if (s.twins) {
    ok = ok && s.horizon.size() == cases && s.horizon_std.size() == cases &&
         s.horizon_ci95.size() == 2 * cases && s.horizon_reached.size() == cases &&
         s.twin_pairs.size() == cases && s.growth_rate.size() == cases &&
         s.growth_window.size() == 2 * cases;
  }
  ok = ok && (s.non_chaotic.empty() || s.non_chaotic.size() == cases) &&
       s.non_chaotic_reason.size() == s.non_chaotic.size() &&
       (s.growth_note.empty() || s.growth_note.size() == cases) &&
       (s.horizon_median.empty() || s.horizon_median.size() == cases) &&
       s.horizon_median_ci95.size() == 2 * s.horizon_median.size() &&
       s.suggested_duration.size() == s.horizon_median.size();
  for (const std::vector<double>& v : s.axis_values) ok = ok && v.size() == cases;
  for (const std::vector<double>* v :
       {&s.time_mean_stderr, &s.effective_samples, &s.decorrelation_time}) {
    ok = ok && (v->empty() || v->size() == cases * n_obs);
  }
  if (!ok) throw UsageError(s.path + ": archive is inconsistent (dataset shapes disagree)");
}

}  // namespace

ArchiveSummary read_summary(const std::string& path, bool verify) {
  ArchiveSummary s;
  s.path = path;
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) throw UsageError(path + ": no such archive");
  if (verify) verify_seal(path);
  try {
    const h5::File file = h5::File::open_read(path);
    const h5::Group root = file.root();
    read_identity(root, s);
    read_content(root, s);
  } catch (const UsageError&) {
    throw;
  } catch (const Error& e) {
    throw UsageError(path + ": not a readable chaosweep archive: " + e.what());
  }
  check_shapes(s);
  return s;
}

}  // namespace chaosweep::archive
