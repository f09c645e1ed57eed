// A byte count for people: "1.5 MiB" (binary units up to PiB, one decimal).
#pragma once

#include <cstdio>
#include <string>

namespace chaosweep {

inline std::string bytes_text(double bytes) {
  const char* units[] = {"B", "KiB", "MiB", "GiB", "TiB", "PiB"};
  int u = 0;
  while (bytes >= 1024 && u < 5) {
    bytes /= 1024;
    ++u;
  }
  char text[32];
  std::snprintf(text, sizeof text, "%.1f %s", bytes, units[u]);
  return text;
}

}  // namespace chaosweep
