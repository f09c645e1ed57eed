// Named state arrays; see saved_state.hpp.
#include "stats/saved_state.hpp"

#include "core/error.hpp"

namespace chaosweep::stats {
namespace {

template <typename T>
const std::vector<T>& find(const std::vector<std::pair<std::string, std::vector<T>>>& arrays,
                           const std::string& name, std::size_t size) {
  const std::pair<std::string, std::vector<T>>* hit = nullptr;
  for (const auto& a : arrays) {
    if (a.first != name) continue;
    if (hit) throw Error("the saved batch state holds array `" + name + "` twice");
    hit = &a;
  }
  if (!hit) throw Error("the saved batch state has no array `" + name + "`");
  if (hit->second.size() != size) {
    throw Error("the saved batch state's array `" + name + "` has " +
                std::to_string(hit->second.size()) + " values where " + std::to_string(size) +
                " are expected");
  }
  return hit->second;
}

}  // namespace

void SavedState::put(std::string name, std::vector<double> values) {
  reals.emplace_back(std::move(name), std::move(values));
}

void SavedState::put(std::string name, std::vector<std::int64_t> values) {
  integers.emplace_back(std::move(name), std::move(values));
}

SavedStateReader::SavedStateReader(const RealArrays& reals, const IntegerArrays& integers)
    : reals_(reals), integers_(integers) {}

const std::vector<double>& SavedStateReader::reals(const std::string& name, std::size_t size) {
  ++reals_read_;
  return find(reals_, name, size);
}

const std::vector<std::int64_t>& SavedStateReader::integers(const std::string& name,
                                                           std::size_t size) {
  ++integers_read_;
  return find(integers_, name, size);
}

void SavedStateReader::finish() const {
  if (reals_read_ != reals_.size() || integers_read_ != integers_.size()) {
    throw Error("the saved batch state holds arrays this batch does not have (" +
                std::to_string(reals_.size() + integers_.size()) + " arrays, " +
                std::to_string(reals_read_ + integers_read_) + " expected)");
  }
}

}  // namespace chaosweep::stats
