// The small archive-like file the collective test writes and reads back: its shapes, which
// rank writes what, and the rule that gives every value. check_readers.py restates the same
// rules in Python, so the C++ writer and the Python readers are checked independently.
//
//   /                      attributes title, spec_yaml, status (strings), format_version,
//                          ranks (int64), dt (double)
//   /observable            (observable) string coordinate: kObservableNames
//   /case/case             dimension without coordinates
//   /case/forcing          (case) double            forcing(c) = 0.5 c              rank 0
//   /member/{case,member,exponent}                  dimensions without coordinates
//   /member/time_mean      (case, member, observable) double, member rows split unevenly
//                          over ranks, written in batches of kBatch members
//                          time_mean(c, m, o) = 100 c + m + 0.125 o
//   /member/transitions    (case, member) int64, same split   transitions(c, m) = (c+1) 10^12 + m
//   /member/status         (case, member) uint8      status(c, m) = (7c + m) mod 3   rank 0
//   /member/lyapunov       (case, member, exponent) double, exponent has length 0
//   /ensemble/{case,bound} dimensions without coordinates; /ensemble/observable a string
//                          coordinate of this group
//   /ensemble/time_mean    (case, observable) double, NaN fill; the last rank writes every
//                          case but the last     ensemble_mean(c, o) = -(c + 0.5 o)
//   /ensemble/time_mean_ci95 (case, observable, bound) double   ensemble_mean -/+ 0.25  rank 0
//   /snapshot/time         (time) double coordinate   time(t) = 0.5 t              rank 0
//   /snapshot/case         dimension without coordinates
//   /snapshot/mean         (time, case) double, time rows split evenly, last rank first
//                          snapshot_mean(t, c) = 10 t - c
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace chaosweep::test::sample {

constexpr std::uint64_t kCases = 3;
constexpr std::uint64_t kMembers = 7;
constexpr std::uint64_t kTimes = 5;
constexpr std::uint64_t kBounds = 2;
constexpr std::uint64_t kBatch = 2;  // members per collective write of time_mean

/// Observable names; one is non-ASCII to exercise UTF-8.
inline const std::vector<std::string> kObservableNames = {"x", "y", "z", "\xce\xa9 energy"};
inline std::uint64_t observables() { return kObservableNames.size(); }

inline const std::string kTitle = "h5 layer test \xe2\x80\x94 Lorenz \xc2\xbd";
inline const std::string kSpecYaml = "campaign: {name: test}\nmodel:\n  name: lorenz63\n";

inline double forcing(std::uint64_t c) { return 0.5 * static_cast<double>(c); }
inline double time_mean(std::uint64_t c, std::uint64_t m, std::uint64_t o) {
  return 100.0 * static_cast<double>(c) + static_cast<double>(m) + 0.125 * static_cast<double>(o);
}
inline std::int64_t transitions(std::uint64_t c, std::uint64_t m) {
  return static_cast<std::int64_t>(c + 1) * 1000000000000LL + static_cast<std::int64_t>(m);
}
inline std::uint8_t status(std::uint64_t c, std::uint64_t m) {
  return static_cast<std::uint8_t>((7 * c + m) % 3);
}
inline double ensemble_mean(std::uint64_t c, std::uint64_t o) {
  return -(static_cast<double>(c) + 0.5 * static_cast<double>(o));
}
inline double snapshot_time(std::uint64_t t) { return 0.5 * static_cast<double>(t); }
inline double snapshot_mean(std::uint64_t t, std::uint64_t c) {
  return 10.0 * static_cast<double>(t) - static_cast<double>(c);
}

/// A contiguous run of rows owned by one rank.
struct Rows {
  std::uint64_t first = 0;
  std::uint64_t count = 0;
};

/// Member rows of `rank`: with 3 or more ranks, rank 1 owns none and the others split the
/// members, earlier owners taking one more while a remainder lasts (1: 7; 2: 4 3;
/// 3: 4 0 3; 4: 3 0 2 2).
inline Rows member_rows(int rank, int ranks) {
  std::vector<int> owners;
  for (int r = 0; r < ranks; ++r) {
    if (!(ranks >= 3 && r == 1)) owners.push_back(r);
  }
  const std::uint64_t k = owners.size();
  Rows rows;
  for (std::uint64_t i = 0; i < k; ++i) {
    const std::uint64_t count = kMembers / k + (i < kMembers % k ? 1 : 0);
    if (owners[i] == rank) {
      rows.count = count;
      return rows;
    }
    rows.first += count;
  }
  return Rows{};
}

/// Time rows of `rank` for /snapshot/mean: an even split handed out from the last rank down.
inline Rows time_rows(int rank, int ranks) {
  const int slot = ranks - 1 - rank;
  Rows rows;
  for (int s = 0; s <= slot; ++s) {
    const std::uint64_t count =
        kTimes / ranks + (static_cast<std::uint64_t>(s) < kTimes % ranks ? 1 : 0);
    if (s == slot)
      rows.count = count;
    else
      rows.first += count;
  }
  return rows;
}

}  // namespace chaosweep::test::sample
