// The archive's schema: every dataset's path, dimensions, type, units and long name, and every
// dimension's meaning, in one place. The writer, the reader, `summary` and docs/archive.md's dataset
// and dimension tables all use these lists.
//
// Units: every model is non-dimensional. State variables, observables and parameters are in
// the model's own scale (units "1"); time is in the model's own time unit, kModelTime, and
// rates are per that unit, kPerModelTime.
#pragma once

#include <string>
#include <vector>

namespace chaosweep::archive {

enum class ElementType { float64, int64, uint8, text };

/// Units of a time in the model's own (non-dimensional) time unit, and of a rate per that unit.
inline constexpr const char* kModelTime = "model_time_unit";
inline constexpr const char* kPerModelTime = "1/model_time_unit";

/// One dataset of the archive. Dimension names refer to dimension scales in the same group
/// (each group carries the scales of the dimensions its datasets use).
struct DatasetDef {
  std::string path;               // e.g. "/member/time_mean"; "/case/<parameter>" is a pattern
  std::vector<std::string> dims;  // slowest first
  ElementType type = ElementType::float64;
  std::string units;              // "1", kModelTime or kPerModelTime
  std::string long_name;
  std::string present;            // when the dataset exists ("always", or the spec key)
};

/// One dimension of the archive. A name means the same thing in every group that uses it, and
/// where a group gives it coordinate values they are those of every other group (for `case`,
/// `observable`, `regime`, `exponent`: the same campaign-wide list; for `bound` and
/// `window_edge`: the fixed labels below).
struct DimensionDef {
  std::string name;
  std::string units;                // of its coordinate values
  std::string long_name;
  std::vector<std::string> labels;  // fixed coordinate values; empty when the campaign sets them
  std::string coordinates;          // what its coordinate values are, for docs/archive.md
};

/// Every dimension the archive's datasets use.
const std::vector<DimensionDef>& dimensions();

/// The definition of dimension `name`; throws std::logic_error if unknown.
const DimensionDef& dimension(const std::string& name);

/// Every dataset the archive may contain, in archive order.
const std::vector<DatasetDef>& datasets();

/// The definition of `path` ("/case/forcing" matches "/case/<parameter>"); throws if unknown.
const DatasetDef& dataset(const std::string& path);

/// The dataset table, then the dimension table, as Markdown (docs/archive.md's tables).
std::string markdown_table();

}  // namespace chaosweep::archive
