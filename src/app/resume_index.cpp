// The finished-batch index of a resume, made by all ranks together (see resume_index.hpp).
#include "app/resume_index.hpp"

#include <algorithm>
#include <cstring>
#include <stdexcept>
#include <string>
#include <tuple>

namespace chaosweep::app {
namespace {

/// Words of one entry on the wire: batch, segment, payload offset and length, and the
/// payload's SHA-256 (32 bytes).
constexpr std::size_t kWords = 8;

void encode(const checkpoint::DoneIndex::Location& at, std::vector<std::int64_t>& out) {
  const checkpoint::SegmentEntry& e = at.entry;
  out.push_back(e.batch);
  out.push_back(static_cast<std::int64_t>(at.segment));
  out.push_back(static_cast<std::int64_t>(e.payload_offset));
  out.push_back(static_cast<std::int64_t>(e.payload_length));
  const auto nibble = [](char c) {
    return static_cast<unsigned>(c >= 'a' ? c - 'a' + 10 : c >= 'A' ? c - 'A' + 10 : c - '0') & 15u;
  };
  unsigned char digest[32] = {};
  for (std::size_t i = 0; i < 32 && 2 * i + 1 < e.payload_sha256.size(); ++i) {
    digest[i] = static_cast<unsigned char>(nibble(e.payload_sha256[2 * i]) << 4 |
                                           nibble(e.payload_sha256[2 * i + 1]));
  }
  for (int w = 0; w < 4; ++w) {
    std::int64_t word;
    std::memcpy(&word, digest + 8 * w, 8);
    out.push_back(word);
  }
}

checkpoint::DoneIndex::Location decode(const std::int64_t* words) {
  checkpoint::DoneIndex::Location at;
  at.entry.batch = words[0];
  at.segment = static_cast<std::size_t>(words[1]);
  at.entry.payload_offset = static_cast<std::uint64_t>(words[2]);
  at.entry.payload_length = static_cast<std::uint64_t>(words[3]);
  unsigned char digest[32];
  std::memcpy(digest, words + 4, 32);
  static const char* hex = "0123456789abcdef";
  for (unsigned char b : digest) {
    at.entry.payload_sha256 += hex[b >> 4];
    at.entry.payload_sha256 += hex[b & 15];
  }
  return at;
}

/// A line of damage found in segment `segment` as sent to rank 0: the segment's number, its
/// kind ('P' a problem, 'C' a record cut short) and the line, ended by a NUL.
void add_report(std::string& out, std::size_t segment, char kind, const std::string& line) {
  out += std::to_string(segment) + ' ' + kind + ' ' + line + '\0';
}

/// Every rank's reports on rank 0, into index.problems and index.cut_short in segment order
/// (each segment's lines in the order found), as an index that reads every segment lists them;
/// nothing on the other ranks.
void gather_reports(const parallel::Communicator& comm, const std::string& mine,
                    checkpoint::DoneIndex& index) {
  struct Report {
    std::size_t segment;
    char kind;
    std::string line;
  };
  std::vector<Report> all;
  for (const std::string& text : comm.gather_on_root(mine)) {
    for (std::size_t from = 0; from < text.size();) {
      const std::size_t space = text.find(' ', from), end = text.find('\0', from);
      all.push_back({std::stoul(text.substr(from, space - from)), text[space + 1],
                     text.substr(space + 3, end - space - 3)});
      from = end + 1;
    }
  }
  std::stable_sort(all.begin(), all.end(),
                   [](const Report& a, const Report& b) { return a.segment < b.segment; });
  for (Report& r : all) {
    (r.kind == 'C' ? index.cut_short : index.problems).push_back(std::move(r.line));
  }
}

}  // namespace

checkpoint::DoneIndex distributed_index(const parallel::Communicator& comm,
                                        const checkpoint::Store& store, plan::Range run) {
  // The segments this rank reads, indexed with every batch of the run.
  checkpoint::DoneIndex read;
  read.segments = store.segment_paths();
  std::string reports;  // the damage found, for rank 0
  for (std::size_t k = static_cast<std::size_t>(comm.rank()); k < read.segments.size();
       k += static_cast<std::size_t>(comm.size())) {
    const std::size_t problems = read.problems.size(), cut_short = read.cut_short.size();
    store.index_segment(read, k, run.first, run.last);
    for (std::size_t i = problems; i < read.problems.size(); ++i) {
      add_report(reports, k, 'P', read.problems[i]);
    }
    for (std::size_t i = cut_short; i < read.cut_short.size(); ++i) {
      add_report(reports, k, 'C', read.cut_short[i]);
    }
  }
  // Every entry to the owner of its batch.
  const std::int64_t n = run.last - run.first;
  std::vector<std::vector<std::int64_t>> to_rank(static_cast<std::size_t>(comm.size()));
  for (const auto& [batch, locations] : read.batches) {
    const int owner = plan::owner(n, batch - run.first, comm.size());
    for (const checkpoint::DoneIndex::Location& at : locations) encode(at, to_rank[owner]);
  }
  const std::vector<std::int64_t> received = comm.exchange(to_rank);
  if (received.size() % kWords != 0) throw std::logic_error("distributed_index: torn entries");

  std::vector<checkpoint::DoneIndex::Location> mine;
  for (std::size_t i = 0; i < received.size(); i += kWords) mine.push_back(decode(&received[i]));
  // segment order, then file order: the order of an index that reads every segment
  std::sort(mine.begin(), mine.end(), [](const auto& a, const auto& b) {
    return std::tie(a.segment, a.entry.payload_offset) < std::tie(b.segment, b.entry.payload_offset);
  });
  checkpoint::DoneIndex index;
  index.segments = std::move(read.segments);
  for (checkpoint::DoneIndex::Location& at : mine) index.batches[at.entry.batch].push_back(std::move(at));
  gather_reports(comm, reports, index);
  return index;
}

}  // namespace chaosweep::app
