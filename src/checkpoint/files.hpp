// Durable file operations for checkpoints: a file is either absent or complete on disk.
#pragma once

#include <string>

namespace chaosweep::checkpoint {

/// Writes `bytes` to `path` atomically: to "<path>.tmp" in the same directory, then renamed
/// over `path`. With `durable`, the file is fsynced before the rename and the directory after
/// it, so the file survives a crash of the machine; without, it survives the death of the
/// process (call sync_file later). Throws IoError on any failure (the temporary file is
/// removed; an existing `path` stays as it was).
void write_atomically(const std::string& path, const std::string& bytes, bool durable = true);

/// fsync of a file written earlier without `durable`.
void sync_file(const std::string& path);

/// The whole content of `path`; throws IoError if it cannot be read.
std::string read_file(const std::string& path);

/// fsync of a directory (after renames inside it).
void sync_directory(const std::string& path);

}  // namespace chaosweep::checkpoint
