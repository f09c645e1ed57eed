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

/// Per estimated column, the moments across the batch's valid members whose value is finite
/// (a regime's mean residence is NaN for a member that never visited it), added in member
/// order; a member's columns go side by side (independent updates overlap instead of waiting
/// on one another).
void add_estimated(const std::vector<Estimated>& estimated, const run::BatchResult& b,
                   std::vector<double>& out) {
  std::vector<const double*> values;
  std::size_t columns = 0;
  for (const Estimated& e : estimated) {
    values.push_back(results::array_of<double>(b, *e.quantity).data());
    columns += e.width;
  }
  std::vector<stats::Moments> m(columns);
  for (int i = 0; i < b.count; ++i) {
    if (b.status[i] != run::kValid) continue;
    stats::Moments* column = m.data();
    for (std::size_t q = 0; q < estimated.size(); ++q) {
      const std::size_t width = estimated[q].width;
      const double* row = values[q] + static_cast<std::size_t>(i) * width;
      for (std::size_t k = 0; k < width; ++k, ++column) {
        if (std::isfinite(row[k])) column->add(row[k]);
      }
    }
  }
  for (const stats::Moments& column : m) column.append_to(out);
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

/// The twin partials: into `moments` the [leads] log-separation moments (from the batch), the
/// horizon's and the log threshold distance's; into `sums` the [leads] separations first seen
/// at each lead and the pairs not separated by the last lead.
void add_twins(const std::vector<double>& lead, double threshold, const run::BatchResult& b,
               std::vector<double>& moments, std::vector<double>& sums) {
  const std::size_t leads = lead.size();
  if (b.twin_moments.size() != leads * kMomentWidth) {
    throw Error("batch " + std::to_string(b.batch_index) + " has no twin results");
  }
  moments.insert(moments.end(), b.twin_moments.begin(), b.twin_moments.end());
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
  h.append_to(moments);
  level.append_to(moments);
  sums.insert(sums.end(), separated.begin(), separated.end());
  sums.push_back(unseparated);
}

/// Per group of members (paired cases), the valid members and the sums of their time means
/// and regime fractions, [group][1 + observables + regimes], added in member order.
void add_pair_groups(const plan::Plan& plan, const run::BatchResult& b, std::vector<double>& out) {
  const std::size_t n_obs = plan.observables.size(), n_regimes = plan.regime_labels.size();
  const std::size_t width = 1 + n_obs + n_regimes;
  const std::size_t at = out.size();
  out.resize(at + static_cast<std::size_t>(plan.pair_groups) * width, 0.0);
  for (int i = 0; i < b.count; ++i) {
    if (b.status[i] != run::kValid) continue;
    const std::size_t row = static_cast<std::size_t>(i);
    double* g = out.data() + at + static_cast<std::size_t>(plan.pair_group(b.first_member + i)) * width;
    g[0] += 1.0;
    for (std::size_t o = 0; o < n_obs; ++o) g[1 + o] += b.time_mean[row * n_obs + o];
    for (std::size_t k = 0; k < n_regimes; ++k) {
      g[1 + n_obs + k] += b.regime_fraction[row * n_regimes + k];
    }
  }
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
  const std::size_t times = static_cast<std::size_t>(plan.snapshot_count);
  SummaryParts p;
  for (const Estimated& e : estimated_quantities(plan)) p.columns += e.width;
  p.leads = plan.twins.every_steps > 0 ? static_cast<std::size_t>(plan.twins.leads) : 0;
  const std::size_t twin_triples = p.leads > 0 ? p.leads + 2 : 0;
  const std::size_t paired = plan.outputs.paired ? times * n_obs : 0;  // after the snapshots
  const std::size_t triples = p.columns + twin_triples + times * n_obs + paired;
  p.estimated = 0;
  p.twin_moments = kMomentWidth * p.columns;
  p.snapshots = p.twin_moments + kMomentWidth * twin_triples;
  p.errors = kMomentWidth * triples;
  p.twin_sums = p.errors + stats::MemberErrorSums::kPacked * n_obs;
  p.response = p.twin_sums + (p.leads > 0 ? p.leads + 1 : 0);
  p.response_width = static_cast<std::size_t>(plan.response_groups) * plan.extent("response_sum");
  if (!plan.outputs.response) p.response_width = 0;
  p.pair = p.response + p.response_width;
  p.pair_width = static_cast<std::size_t>(plan.pair_groups) * (1 + n_obs + plan.regime_labels.size());
  const std::size_t sums = stats::MemberErrorSums::kPacked * n_obs +
                           (p.leads > 0 ? p.leads + 1 : 0) + p.response_width + p.pair_width;
  p.layout = stats::SummaryLayout{triples, sums};
  const std::size_t bins =
      spec.statistics.histogram.enabled ? static_cast<std::size_t>(spec.statistics.histogram.bins) : 0;
  p.histogram = 1;
  p.regimes = 1 + bins;
  p.count_width = 1 + bins + times * plan.regime_labels.size();
  return p;
}

Summariser::Summariser(const spec::Spec& spec, const plan::Plan& plan)
    : parts_(summary_parts(spec, plan)),
      estimated_(estimated_quantities(plan)),
      lead_(parts_.leads > 0 ? run::twin_leads(plan.twins, spec.integration.dt) : std::vector<double>{}),
      threshold_(spec.statistics.twins.threshold),
      observables_(plan.observables.size()),
      plan_(plan) {}

void Summariser::append(const run::BatchResult& b, std::vector<double>& summary,
                        std::vector<std::int64_t>& counts) const {
  const std::size_t s0 = summary.size(), c0 = counts.size();
  std::vector<double> sums;
  add_estimated(estimated_, b, summary);
  if (parts_.leads > 0) add_twins(lead_, threshold_, b, summary, sums);
  summary.insert(summary.end(), b.snapshot_moments.begin(), b.snapshot_moments.end());
  summary.insert(summary.end(), b.paired_moments.begin(), b.paired_moments.end());
  add_errors(observables_, b, summary);
  summary.insert(summary.end(), sums.begin(), sums.end());
  if (parts_.response_width > 0) {
    if (b.response_sums.size() != parts_.response_width) {
      throw Error("batch " + std::to_string(b.batch_index) + " has no response sums");
    }
    summary.insert(summary.end(), b.response_sums.begin(), b.response_sums.end());
  }
  if (parts_.pair_width > 0) add_pair_groups(plan_, b, summary);
  std::int64_t non_finite = 0;
  for (int i = 0; i < b.count; ++i) non_finite += b.status[i] != run::kValid ? 1 : 0;
  counts.push_back(non_finite);
  counts.insert(counts.end(), b.histogram.begin(), b.histogram.end());
  counts.insert(counts.end(), b.snapshot_regimes.begin(), b.snapshot_regimes.end());
  if (summary.size() - s0 != parts_.layout.width() || counts.size() - c0 != parts_.count_width) {
    throw Error("batch " + std::to_string(b.batch_index) + ": its summary does not match the campaign");
  }
}

void Summariser::operator()(run::BatchResult& b) const {
  std::vector<double> summary;
  std::vector<std::int64_t> counts;
  summary.reserve(parts_.layout.width());
  counts.reserve(parts_.count_width);
  append(b, summary, counts);
  b.summary = std::move(summary);
  b.summary_counts = std::move(counts);
}

void summarise(const spec::Spec& spec, const plan::Plan& plan, run::BatchResult& b) {
  Summariser(spec, plan)(b);
}

LocalPartial::LocalPartial(const spec::Spec& spec, const plan::Plan& plan, std::int64_t first)
    : plan_(plan),
      summariser_(spec, plan),
      tree_(stats::MergeShape{static_cast<std::int64_t>(plan.cases.size()),
                              plan.batches_per_case()},
            summariser_.parts().layout),
      packed_(tree_.empty()),
      counts_(plan.cases.size() * summariser_.parts().count_width, 0),
      next_(first) {}

void LocalPartial::add(const run::BatchResult& b) {
  const SummaryParts& parts = summariser_.parts();
  std::vector<double> summary;
  std::vector<std::int64_t> counts;
  if (b.summary.empty() && b.summary_counts.empty()) {
    summariser_.append(b, summary, counts);
  } else if (b.summary.size() == parts.layout.width() && b.summary_counts.size() == parts.count_width) {
    summary = b.summary;
    counts = b.summary_counts;
  } else {
    throw Error("batch " + std::to_string(b.batch_index) + ": its summary does not match the campaign");
  }
  // counts add exactly in any order
  const std::size_t c = static_cast<std::size_t>(b.batch_index / plan_.batches_per_case());
  for (std::size_t k = 0; k < parts.count_width; ++k) counts_[c * parts.count_width + k] += counts[k];
  if (b.batch_index != next_) {
    pending_.emplace(b.batch_index, std::move(summary));
    return;
  }
  fold(b.batch_index, summary.data());
  while (!pending_.empty() && pending_.begin()->first == next_) {
    fold(next_, pending_.begin()->second.data());
    pending_.erase(pending_.begin());
  }
}

void LocalPartial::fold(std::int64_t index, const double* summary) {
  tree_.add(packed_, index, summary);
  next_ = index + 1;
}

void keep_archived_rows(const plan::Plan& plan, run::BatchResult& b) {
  const std::int64_t kept = std::clamp<std::int64_t>(plan.archived_members - b.first_member, 0, b.count);
  results::for_each_array(b, [&](const results::Quantity& q, auto& values) {
    if (q.scope == results::Scope::member) {
      values.resize(values.size() / static_cast<std::size_t>(b.count) * static_cast<std::size_t>(kept));
      values.shrink_to_fit();
    } else if (q.scope == results::Scope::batch &&
               (q.merge == results::Merge::sum || q.merge == results::Merge::moments ||
                q.merge == results::Merge::summed)) {
      values.clear();
      values.shrink_to_fit();
    }
  });
}

}  // namespace chaosweep::parallel
