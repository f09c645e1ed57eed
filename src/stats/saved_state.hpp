// Named raw arrays that hold an accumulator's complete internal state, so that a batch can be
// stopped, stored (checkpoint layer) and continued with bitwise the same results.
// Pure numerics: no I/O; the names are stable because checkpoints store them.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <utility>
#include <vector>

namespace chaosweep::stats {

using RealArrays = std::vector<std::pair<std::string, std::vector<double>>>;
using IntegerArrays = std::vector<std::pair<std::string, std::vector<std::int64_t>>>;

/// Arrays being saved, in the order they are added.
struct SavedState {
  RealArrays reals;
  IntegerArrays integers;
  void put(std::string name, std::vector<double> values);
  void put(std::string name, std::vector<std::int64_t> values);
};

/// Reads arrays back by name with their expected sizes; every mismatch throws chaosweep::Error
/// with a one-line message. finish() checks that no array was left unread (a state from a
/// differently configured batch).
class SavedStateReader {
 public:
  SavedStateReader(const RealArrays& reals, const IntegerArrays& integers);
  const std::vector<double>& reals(const std::string& name, std::size_t size);
  const std::vector<std::int64_t>& integers(const std::string& name, std::size_t size);
  void finish() const;

 private:
  const RealArrays& reals_;
  const IntegerArrays& integers_;
  std::size_t reals_read_ = 0, integers_read_ = 0;
};

}  // namespace chaosweep::stats
