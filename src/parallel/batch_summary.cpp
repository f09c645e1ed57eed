// One batch's summary for the reduction (see batch_summary.hpp).
#include "parallel/batch_summary.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "core/error.hpp"
#include "run/twins.hpp"
#include "stats/ensemble.hpp"
#include "stats/member_errors.hpp"

namespace chaosweep::parallel {
namespace {

constexpr std::size_t kMomentWidth = stats::Moments::kPacked;

/// Per estimated column, the moments across the batch's valid members.
void add_estimated(const std::vector<Estimated>& estimated, const run::BatchResult& b,
                   std::vector<double>& out) {
  for (const Estimated& e : estimated) {
    const std::vector<double>& values = results::array_of<double>(b, *e.quantity);
    for (std::size_t column = 0; column < e.width; ++column) {
      stats::Moments m;
      for (int i = 0; i < b.count; ++i) {
        if (b.status[i] == run::kValid) m.add(values[static_cast<std::size_t>(i) * e.width + column]);
      }
      m.append_to(out);
    }
  }
}

/// Per observable, the sums behind the time mean's standard error over the valid members.
void add_errors(std::size_t n_obs, const run::BatchResult& b, std::vector<double>& out) {
  for (std::size_t o = 0; o < n_obs; ++o) {
    stats::MemberErrorSums sums;
    for (int i = 0; i < b.count; ++i) {
      if (b.status[i] != run::kValid) continue;
      const std::size_t k = static_cast<std::size_t>(i) * n_obs + o;
      sums.add(b.time_mean_samples[k], b.time_mean_stderr[k], b.time_mean_tau[k],
               b.time_variance[k]);
    }
    const std::size_t at = out.size();
    out.resize(at + stats::MemberErrorSums::kPacked);
    sums.append_to(out.data() + at);
  }
}

/// The twin partials: [leads][3] log-separation moments (from the batch), the horizon's and
/// the log threshold distance's moments, [leads] separations first seen at each lead, the
/// pairs not separated by the last lead.
void add_twins(const std::vector<double>& lead, double threshold, const run::BatchResult& b,
               std::vector<double>& out) {
  const std::size_t leads = lead.size();
  if (b.twin_moments.size() != leads * kMomentWidth) {
    throw Error("batch " + std::to_string(b.batch_index) + " has no twin results");
  }
  out.insert(out.end(), b.twin_moments.begin(), b.twin_moments.end());
  stats::Moments h, level;
  std::vector<double> separated(leads, 0.0);
  double unseparated = 0.0;
  for (int i = 0; i < b.count; ++i) {
    // a valid pair: a valid member whose spread (and so its twin) is finite
    if (b.status[i] != run::kValid || !std::isfinite(b.spread[i])) continue;
    level.add(std::log(threshold * b.spread[i]));
    if (!std::isfinite(b.horizon[i])) {
      unseparated += 1.0;
      continue;
    }
    h.add(b.horizon[i]);
    // horizons are lead times, computed exactly as the lead coordinate is
    const auto k = std::lower_bound(lead.begin(), lead.end(), b.horizon[i]) - lead.begin();
    if (k == static_cast<std::ptrdiff_t>(leads) || lead[static_cast<std::size_t>(k)] != b.horizon[i]) {
      throw Error("batch " + std::to_string(b.batch_index) + ": a horizon is not a lead time");
    }
    separated[static_cast<std::size_t>(k)] += 1.0;
  }
  h.append_to(out);
  level.append_to(out);
  out.insert(out.end(), separated.begin(), separated.end());
  out.push_back(unseparated);
}

}  // namespace

std::vector<Estimated> estimated_quantities(const plan::Plan& plan) {
  std::vector<Estimated> out;
  for (const results::Quantity& q : results::quantities()) {
    if (q.merge != results::Merge::member_moments || !q.present(plan.outputs)) continue;
    std::size_t width = 1;  // the dimensions after (case, member)
    for (std::size_t d = 2; d < q.dims.size(); ++d) width *= plan.extent(q.dims[d]);
    out.push_back({&q, width});
  }
  return out;
}

SummaryParts summary_parts(const spec::Spec& spec, const plan::Plan& plan) {
  const std::size_t n_obs = plan.observables.size();
  const std::size_t leads = plan.twins.every_steps > 0 ? static_cast<std::size_t>(plan.twins.leads) : 0;
  const std::size_t times = static_cast<std::size_t>(plan.snapshot_count);
  std::size_t columns = 0;
  for (const Estimated& e : estimated_quantities(plan)) columns += e.width;
  SummaryParts p;
  std::size_t at = 0;
  const auto place = [&at](SummaryPart& part, std::size_t moments, std::size_t sums) {
    part.offset = at;
    part.layout = stats::SummaryLayout{moments, sums};
    at += part.layout.width();
  };
  place(p.estimated, columns, 0);
  place(p.errors, 0, stats::MemberErrorSums::kPacked * n_obs);
  if (leads > 0) place(p.twins, leads + 2, leads + 1);
  place(p.snapshots, times * n_obs, 0);
  p.width = at;
  const std::size_t bins =
      spec.statistics.histogram.enabled ? static_cast<std::size_t>(spec.statistics.histogram.bins) : 0;
  p.histogram_offset = 1;
  p.regimes_offset = 1 + bins;
  p.count_width = 1 + bins + times * plan.regime_labels.size();
  return p;
}

namespace {

/// Appends b's summary and counts (see SummaryParts) to `summary` and `counts`.
void append_summary(const spec::Spec& spec, const plan::Plan& plan, const SummaryParts& parts,
                    const run::BatchResult& b, std::vector<double>& summary,
                    std::vector<std::int64_t>& counts) {
  const std::size_t s0 = summary.size(), c0 = counts.size();
  add_estimated(estimated_quantities(plan), b, summary);
  add_errors(plan.observables.size(), b, summary);
  if (parts.twins.layout.width() > 0) {
    add_twins(run::twin_leads(plan.twins, spec.integration.dt), spec.statistics.twins.threshold,
              b, summary);
  }
  summary.insert(summary.end(), b.snapshot_moments.begin(), b.snapshot_moments.end());
  std::int64_t non_finite = 0;
  for (int i = 0; i < b.count; ++i) non_finite += b.status[i] != run::kValid ? 1 : 0;
  counts.push_back(non_finite);
  counts.insert(counts.end(), b.histogram.begin(), b.histogram.end());
  counts.insert(counts.end(), b.snapshot_regimes.begin(), b.snapshot_regimes.end());
  if (summary.size() - s0 != parts.width || counts.size() - c0 != parts.count_width) {
    throw Error("batch " + std::to_string(b.batch_index) + ": its summary does not match the campaign");
  }
}

}  // namespace

void summarise(const spec::Spec& spec, const plan::Plan& plan, run::BatchResult& b) {
  std::vector<double> summary;
  std::vector<std::int64_t> counts;
  append_summary(spec, plan, summary_parts(spec, plan), b, summary, counts);
  b.summary = std::move(summary);
  b.summary_counts = std::move(counts);
}

LocalSummaries::LocalSummaries(const spec::Spec& spec, const plan::Plan& plan,
                               const std::vector<run::BatchResult>& local)
    : parts(summary_parts(spec, plan)) {
  for (const run::BatchResult& b : local) {
    indices.push_back(b.batch_index);
    if (b.summary.empty() && b.summary_counts.empty()) {
      append_summary(spec, plan, parts, b, summaries, counts);
      continue;
    }
    if (b.summary.size() != parts.width || b.summary_counts.size() != parts.count_width) {
      throw Error("batch " + std::to_string(b.batch_index) + ": its summary does not match the campaign");
    }
    summaries.insert(summaries.end(), b.summary.begin(), b.summary.end());
    counts.insert(counts.end(), b.summary_counts.begin(), b.summary_counts.end());
  }
}

std::vector<double> LocalSummaries::part(const SummaryPart& p) const {
  const std::size_t w = p.layout.width();
  std::vector<double> out;
  out.reserve(indices.size() * w);
  for (std::size_t i = 0; i < indices.size(); ++i) {
    const double* at = summaries.data() + i * parts.width + p.offset;
    out.insert(out.end(), at, at + w);
  }
  return out;
}

std::vector<std::int64_t> LocalSummaries::count_part(std::size_t offset, std::size_t width) const {
  std::vector<std::int64_t> out;
  out.reserve(indices.size() * width);
  for (std::size_t i = 0; i < indices.size(); ++i) {
    const std::int64_t* at = counts.data() + i * parts.count_width + offset;
    out.insert(out.end(), at, at + width);
  }
  return out;
}

void keep_archived_rows(const plan::Plan& plan, run::BatchResult& b) {
  const std::int64_t kept = std::clamp<std::int64_t>(plan.archived_members - b.first_member, 0, b.count);
  results::for_each_array(b, [&](const results::Quantity& q, auto& values) {
    if (q.scope == results::Scope::member) {
      values.resize(values.size() / static_cast<std::size_t>(b.count) * static_cast<std::size_t>(kept));
      values.shrink_to_fit();
    } else if (q.scope == results::Scope::batch &&
               (q.merge == results::Merge::sum || q.merge == results::Merge::moments)) {
      values.clear();
      values.shrink_to_fit();
    }
  });
}

}  // namespace chaosweep::parallel
