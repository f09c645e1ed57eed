// Serial reader of an archive's ensemble part (see reader.hpp).
#include "archive/reader.hpp"

#include "archive/seal.hpp"

#include <filesystem>
#include <type_traits>

#include "core/error.hpp"
#include "core/version.hpp"
#include "h5/h5.hpp"
#include "results/table.hpp"

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
  if (root.has_attribute("pair_groups")) s.pair_groups = root.int64_attribute("pair_groups");
}

/// The number of values a dataset of `q`'s dimensions holds in this archive: the product of
/// the sizes of its group's scales of those dimensions.
std::size_t expected_size(const h5::Group& root, const results::Quantity& q) {
  std::size_t n = 1;
  for (const std::string& dim : q.dims) {
    const std::string scale = q.group() + "/" + dim;
    if (!root.has_dataset(scale)) return 0;
    n *= static_cast<std::size_t>(h5::element_count(root.open_dataset(scale).shape()));
  }
  return n;
}

/// Reads every ensemble quantity of the table the archive holds (archives of earlier versions
/// lack some; those stay empty), checking each against its dimensions' scales.
void read_content(const h5::Group& root, ArchiveSummary& s) {
  s.observables = read_all<std::string>(root, "observable");
  results::EnsembleResults& e = s;
  results::for_each_array(e, [&](const results::Quantity& q, auto& values) {
    using T = typename std::decay_t<decltype(values)>::value_type;
    const std::string path = q.path.empty() ? "" : q.path.substr(1);
    if (path.empty() || !root.has_dataset(path)) return;
    values = read_all<T>(root, path);
    if (values.size() != expected_size(root, q)) {
      throw UsageError(s.path + ": archive is inconsistent (" + q.path +
                       " does not match its dimensions)");
    }
  });
  s.cases = static_cast<std::int64_t>(s.valid_members.size());
  s.regimes = read_optional<std::string>(root, "ensemble/regime");
  if (root.has_dataset("ensemble/lyapunov")) {
    s.exponents = static_cast<int>(read_all<std::int64_t>(root, "ensemble/exponent").size());
  }
  s.twins = root.has_group("twins");
  if (root.has_dataset("response/axis")) {
    s.axes = read_all<std::string>(root, "response/axis");
    for (const std::string& axis : s.axes) s.axis_values.push_back(read_all<double>(root, "case/" + axis));
  }
  s.forcings = read_optional<std::string>(root, "response/forcing_parameter");
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
