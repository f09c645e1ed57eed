// Failures of the HDF5 layer: every one is an IoError carrying HDF5's own message, and HDF5
// prints nothing to stderr.
#include <gtest/gtest.h>
#include <unistd.h>

#include <cstdio>
#include <fstream>
#include <functional>
#include <iterator>

#include "core/error.hpp"
#include "h5/h5.hpp"
#include "mpi_test_main.hpp"

namespace chaosweep::test {
namespace {

using h5::ElementType;

/// Sends file descriptor 2 to a file for the lifetime of the object; text() says what
/// reached it.
class StderrCapture {
 public:
  explicit StderrCapture(const std::string& path) : path_(path) {
    std::fflush(stderr);
    saved_ = dup(2);
    std::FILE* sink = std::fopen(path.c_str(), "w");
    dup2(fileno(sink), 2);
    std::fclose(sink);
  }
  ~StderrCapture() { restore(); }
  std::string text() {
    restore();
    std::ifstream in(path_);
    return std::string(std::istreambuf_iterator<char>(in), {});
  }

 private:
  void restore() {
    if (saved_ < 0) return;
    std::fflush(stderr);
    dup2(saved_, 2);
    close(saved_);
    saved_ = -1;
  }
  std::string path_;
  int saved_ = -1;
};

/// Runs `action` with stderr captured; expects it to throw IoError whose message contains
/// every one of `parts`, and expects nothing on stderr.
void expect_quiet_io_error(const std::function<void()>& action,
                           const std::vector<std::string>& parts) {
  StderrCapture capture(output_path("stderr.rank" + std::to_string(world_rank()), ".txt"));
  std::string message;
  try {
    action();
    ADD_FAILURE() << "no IoError thrown";
  } catch (const IoError& e) {
    message = e.what();
  }
  const std::string printed = capture.text();
  EXPECT_EQ(printed, "") << "stderr received output";
  for (const std::string& part : parts) {
    EXPECT_NE(message.find(part), std::string::npos) << "'" << part << "' not in: " << message;
  }
}

/// A text file, written by rank 0 for all ranks.
std::string not_hdf5_file() {
  const std::string path = output_path("not_hdf5", ".txt");
  if (world_rank() == 0) std::ofstream(path) << "campaign: {name: not an archive}\n";
  MPI_Barrier(MPI_COMM_WORLD);
  return path;
}

TEST(H5Errors, NotHdf5FileThrowsQuietly) {
  const std::string path = not_hdf5_file();
  expect_quiet_io_error([&] { h5::File::open_read(path); },
                        {"opening file for reading: " + path + ": ", "signature"});
  expect_quiet_io_error([&] { h5::File::open_read_parallel(path, MPI_COMM_WORLD); },
                        {"opening file for parallel reading: " + path, "signature"});
  const std::string missing = output_path("missing", ".h5");
  expect_quiet_io_error([&] { h5::File::open_read(missing); },
                        {missing, "No such file or directory"});
}

TEST(H5Errors, MisuseOfAParallelFileThrowsQuietly) {
  const std::string path = output_path("errors", ".h5");
  h5::File file = h5::File::create_parallel(path, MPI_COMM_WORLD);
  {
    h5::Group root = file.root();
    h5::Dataset values = root.create_dataset("values", ElementType::Float64, {4, 3});
    const std::string where = path + ":/values";
    expect_quiet_io_error([&] { root.create_dataset("values", ElementType::Int64, {2}); },
                          {"creating int64 dataset: " + where + ": ", "already exists"});
    expect_quiet_io_error([&] { root.open_dataset("absent"); },
                          {"opening dataset: " + path + ":/absent: "});
    expect_quiet_io_error([&] { root.open_group("values"); }, {"opening group", where});
    expect_quiet_io_error(
        [&] {
          values.write<double>({3, 0}, {2, 3}, nullptr);
        },
        {"writing dataset: " + where, "leaves dimension 0 of extent 4"});
    expect_quiet_io_error(
        [&] {
          values.write({0, 0}, {1, 3}, std::vector<double>(2));
        },
        {"buffer holds 2 values, block needs 3"});
    expect_quiet_io_error([&] { values.write_from_rank0(std::vector<std::int64_t>(12)); },
                          {"dataset holds float64, not int64"});
    expect_quiet_io_error([&] { values.read<std::string>(); }, {"not string"});
    expect_quiet_io_error([&] { values.make_scale(); }, {"must be 1-D"});
    expect_quiet_io_error([&] { root.create_dataset("u8", ElementType::UInt8, {2}, 256.0); },
                          {"fill value is not representable as uint8"});
    expect_quiet_io_error([&] { root.double_attribute("absent"); }, {"attribute absent"});
    expect_quiet_io_error([&] { file.close(); }, {"closing file: " + path, "still open"});
  }
  file.close();  // succeeds once the group and dataset are gone
  expect_quiet_io_error([&] { file.root(); }, {"the file is closed"});
}

TEST(H5Errors, ReadOnlyFilesRefuseWrites) {
  const std::string path = output_path("read_only", ".h5");
  {
    h5::File file = h5::File::create_parallel(path, MPI_COMM_WORLD);
    file.root().create_dataset("names", ElementType::String, {2});
  }  // closed by the destructor
  h5::File file = h5::File::open_read_parallel(path, MPI_COMM_WORLD);
  h5::Dataset names = file.root().open_dataset("names");
  expect_quiet_io_error(
      [&] {
        names.write_strings_from_rank0({"a", "b"});
      },
      {"writing string dataset", "read-only"});
  h5::Group root = file.root();
  expect_quiet_io_error([&] { root.set_attribute("title", "x"); }, {"writing attribute title"});
  // Strings never written read back empty.
  EXPECT_EQ(names.read<std::string>().values, (std::vector<std::string>{"", ""}));
}

TEST(H5Errors, SerialFilesWriteStringsAtOnce) {
  const std::string path = output_path("serial.rank" + std::to_string(world_rank()), ".h5");
  h5::File file = h5::File::create_serial(path);
  EXPECT_EQ(file.ranks(), 1);
  h5::Group root = file.root();
  h5::Dataset names = root.create_dataset("deep/er/names", ElementType::String, {2, 2});
  const std::vector<std::string> values = {"a", "", "\xc3\xa9t\xc3\xa9", "long text with spaces "};
  names.write_strings_from_rank0(values);
  EXPECT_EQ(names.read<std::string>().values, values);  // no close needed on a serial file
  h5::Dataset scalar = root.create_dataset("scalar", ElementType::Int64, {});
  scalar.write_from_rank0(std::vector<std::int64_t>{-42});
  EXPECT_EQ(scalar.read<std::int64_t>().values, std::vector<std::int64_t>{-42});
  EXPECT_EQ(scalar.shape(), h5::Dims{});
  EXPECT_TRUE(root.has_group("deep/er"));
}

}  // namespace
}  // namespace chaosweep::test
