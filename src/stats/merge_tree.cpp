// The fixed merge tree of the ensemble reduction (see merge_tree.hpp).
//
// Packed form of one case: [count, then `slots` nodes of (level, index, summary)], the nodes
// in position order. A node list is a stack: a node is pushed at the end, then the last two
// are merged while they are siblings (l, 2j) and (l, 2j + 1). Pushing the nodes of a run one by
// one onto the list of the run before it leaves no two siblings side by side, so the result is
// the unique list of maximal nodes of the joined run, each computed from its two children:
// the same values however the runs were grouped.
#include "stats/merge_tree.hpp"

#include <algorithm>
#include <stdexcept>
#include <string>

#include "stats/ensemble.hpp"

namespace chaosweep::stats {
namespace {

constexpr std::size_t kHeader = 2;  // level, index

std::size_t ceil_log2(std::int64_t n) {
  std::size_t l = 0;
  while ((std::int64_t{1} << l) < n) ++l;
  return l;
}

}  // namespace

void merge_summary(const SummaryLayout& layout, double* left, const double* right) {
  for (std::size_t k = 0; k < layout.moments; ++k, left += 3, right += 3) {
    Moments m = Moments::unpack(left);
    m.merge(Moments::unpack(right));
    left[0] = m.n;
    left[1] = m.mean;
    left[2] = m.m2;
  }
  for (std::size_t k = 0; k < layout.sums; ++k) left[k] += right[k];
}

MergeTree::MergeTree(MergeShape shape, SummaryLayout layout)
    : cases_(shape.cases), batches_per_case_(shape.batches_per_case), layout_(layout) {
  if (cases_ < 0 || batches_per_case_ < 1) {
    throw std::logic_error("merge tree: needs at least one batch per case");
  }
  width_ = layout.width();
  slots_ = 2 * (ceil_log2(batches_per_case_) + 1);
  node_stride_ = kHeader + width_;
  case_stride_ = 1 + slots_ * node_stride_;
}

std::vector<double> MergeTree::empty() const { return std::vector<double>(packed_size(), 0.0); }

namespace {

/// One case's node list inside a packed form (see the file comment); T is double or const double.
template <typename T>
struct CaseListOf {
  T* base;
  std::size_t node_stride, slots, width;

  std::size_t count() const { return static_cast<std::size_t>(base[0]); }
  T* node(std::size_t i) const { return base + 1 + i * node_stride; }
  std::int64_t level(std::size_t i) const { return static_cast<std::int64_t>(node(i)[0]); }
  std::int64_t index(std::size_t i) const { return static_cast<std::int64_t>(node(i)[1]); }
  std::int64_t begin(std::size_t i) const { return index(i) << level(i); }
  std::int64_t end(std::size_t i) const { return (index(i) + 1) << level(i); }
};
using CaseList = CaseListOf<double>;
using ConstCaseList = CaseListOf<const double>;

/// Pushes node (level, index) with `value` onto `list` and merges sibling pairs at the end.
void push(const CaseList& list, const SummaryLayout& layout, std::int64_t level,
          std::int64_t index, const double* value) {
  std::size_t n = list.count();
  if (n > 0 && list.end(n - 1) != (index << level)) {
    throw std::logic_error("merge tree: batches " + std::to_string(index << level) +
                           " onwards do not follow batch " + std::to_string(list.end(n - 1) - 1));
  }
  if (n == list.slots) throw std::logic_error("merge tree: node list overflow");
  double* slot = list.node(n);
  slot[0] = static_cast<double>(level);
  slot[1] = static_cast<double>(index);
  std::copy(value, value + list.width, slot + kHeader);
  ++n;
  while (n >= 2 && list.level(n - 2) == list.level(n - 1) && list.index(n - 2) % 2 == 0 &&
         list.index(n - 1) == list.index(n - 2) + 1) {
    double* left = list.node(n - 2);
    merge_summary(layout, left + kHeader, list.node(n - 1) + kHeader);
    left[0] += 1.0;
    left[1] = static_cast<double>(list.index(n - 2) / 2);
    --n;
  }
  list.base[0] = static_cast<double>(n);
}

}  // namespace

void MergeTree::add(std::vector<double>& packed, std::int64_t index, const double* summary) const {
  if (packed.size() != packed_size()) throw std::logic_error("merge tree: wrong packed size");
  if (index < 0 || index >= cases_ * batches_per_case_) {
    throw std::logic_error("merge tree: batch " + std::to_string(index) + " out of range");
  }
  const std::int64_t c = index / batches_per_case_;
  const CaseList list{packed.data() + static_cast<std::size_t>(c) * case_stride_, node_stride_,
                      slots_, width_};
  push(list, layout_, 0, index % batches_per_case_, summary);
}

void MergeTree::combine(const double* left, double* right) const {
  std::vector<double> joined(case_stride_);
  for (std::int64_t c = 0; c < cases_; ++c) {
    const std::size_t offset = static_cast<std::size_t>(c) * case_stride_;
    std::copy(left + offset, left + offset + case_stride_, joined.begin());
    const CaseList into{joined.data(), node_stride_, slots_, width_};
    const ConstCaseList from{right + offset, node_stride_, slots_, width_};
    for (std::size_t i = 0; i < from.count(); ++i) {
      push(into, layout_, from.level(i), from.index(i), from.node(i) + kHeader);
    }
    std::copy(joined.begin(), joined.end(), right + offset);
  }
}

std::vector<double> MergeTree::finish(const std::vector<double>& packed) const {
  if (packed.size() != packed_size()) throw std::logic_error("merge tree: wrong packed size");
  std::vector<double> out(static_cast<std::size_t>(cases_) * width_);
  std::vector<double> left(width_);
  for (std::int64_t c = 0; c < cases_; ++c) {
    const ConstCaseList list{packed.data() + static_cast<std::size_t>(c) * case_stride_,
                             node_stride_, slots_, width_};
    const std::size_t n = list.count();
    if (n == 0 || list.begin(0) != 0 || list.end(n - 1) != batches_per_case_) {
      throw std::logic_error("merge tree: case " + std::to_string(c) + " misses batches");
    }
    // The root: the maximal nodes folded from the right.
    double* acc = out.data() + static_cast<std::size_t>(c) * width_;
    std::copy(list.node(n - 1) + kHeader, list.node(n - 1) + kHeader + width_, acc);
    for (std::size_t i = n - 1; i-- > 0;) {
      std::copy(list.node(i) + kHeader, list.node(i) + kHeader + width_, left.begin());
      merge_summary(layout_, left.data(), acc);
      std::copy(left.begin(), left.end(), acc);
    }
  }
  return out;
}

}  // namespace chaosweep::stats
