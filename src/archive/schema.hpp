// The archive's schema: every dataset's path, dimensions, type, units and long name, in one
// place. The writer, the reader, `summary` and the README's dataset table all use this list.
#pragma once

#include <string>
#include <vector>

namespace chaosweep::archive {

enum class ElementType { float64, int64, uint8, text };

/// One dataset of the archive. Dimension names refer to dimension scales in the same group
/// (each group carries the scales of the dimensions its datasets use).
struct DatasetDef {
  std::string path;               // e.g. "/member/time_mean"; "/case/<parameter>" is a pattern
  std::vector<std::string> dims;  // slowest first
  ElementType type = ElementType::float64;
  std::string units;              // CF-style: "1" for nondimensional quantities
  std::string long_name;
  std::string present;            // when the dataset exists ("always", or the spec key)
};

/// Every dataset the archive may contain, in archive order.
const std::vector<DatasetDef>& datasets();

/// The definition of `path` ("/case/forcing" matches "/case/<parameter>"); throws if unknown.
const DatasetDef& dataset(const std::string& path);

/// The dataset table as Markdown (used to generate the README's table).
std::string markdown_table();

}  // namespace chaosweep::archive
