// Durable file operations (see files.hpp). POSIX calls, each checked.
#include "checkpoint/files.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>

#include "core/error.hpp"

namespace chaosweep::checkpoint {
namespace {

[[noreturn]] void fail(const std::string& doing, const std::string& path, int error) {
  throw IoError(doing + " " + path + ": " + std::strerror(error));
}

std::string parent_directory(const std::string& path) {
  const std::size_t slash = path.rfind('/');
  if (slash == std::string::npos) return ".";
  return slash == 0 ? "/" : path.substr(0, slash);
}

void write_all(int fd, const std::string& bytes, const std::string& path) {
  std::size_t done = 0;
  while (done < bytes.size()) {
    const ssize_t n = ::write(fd, bytes.data() + done, bytes.size() - done);
    if (n < 0 && errno == EINTR) continue;  // a signal arrived; the write goes on
    if (n < 0) fail("cannot write", path, errno);
    done += static_cast<std::size_t>(n);
  }
}

}  // namespace

void sync_directory(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_DIRECTORY);
  if (fd < 0) fail("cannot open directory", path, errno);
  const int rc = ::fsync(fd);
  const int error = errno;
  ::close(fd);
  if (rc != 0 && error != EINVAL) fail("cannot sync directory", path, error);
}

void sync_file(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) fail("cannot open", path, errno);
  const int rc = ::fsync(fd);
  const int error = errno;
  ::close(fd);
  if (rc != 0) fail("cannot sync", path, error);
}

void write_atomically(const std::string& path, const std::string& bytes, bool durable) {
  const std::string tmp = path + ".tmp";
  const int fd = ::open(tmp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) fail("cannot create", tmp, errno);
  try {
    write_all(fd, bytes, tmp);
    if (durable && ::fsync(fd) != 0) fail("cannot sync", tmp, errno);
  } catch (...) {
    ::close(fd);
    ::unlink(tmp.c_str());
    throw;
  }
  if (::close(fd) != 0) {
    const int error = errno;
    ::unlink(tmp.c_str());
    fail("cannot close", tmp, error);
  }
  if (std::rename(tmp.c_str(), path.c_str()) != 0) {
    const int error = errno;
    ::unlink(tmp.c_str());
    fail("cannot rename to", path, error);
  }
  if (durable) sync_directory(parent_directory(path));
}

std::string read_file(const std::string& path) {
  std::FILE* file = std::fopen(path.c_str(), "rb");
  if (!file) fail("cannot open", path, errno);
  std::string bytes;
  char buffer[1 << 16];
  std::size_t n = 0;
  while ((n = std::fread(buffer, 1, sizeof buffer, file)) > 0) bytes.append(buffer, n);
  const bool failed = std::ferror(file) != 0;
  std::fclose(file);
  if (failed) fail("cannot read", path, EIO);
  return bytes;
}

}  // namespace chaosweep::checkpoint
