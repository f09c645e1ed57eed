// Tool and archive format versions.
#pragma once

namespace chaosweep {

inline constexpr const char* kToolVersion = "0.1.0";
/// Version of the archive layout; a reader refuses archives with a newer major number.
inline constexpr int kArchiveFormatVersion = 2;  // 2: sealed (archive/seal.hpp)

}  // namespace chaosweep
