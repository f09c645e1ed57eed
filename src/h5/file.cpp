// Opening, flushing and closing files, serially or through MPI-IO.
#include "h5/file.hpp"

#include <exception>
#include <utility>

#include "h5/detail.hpp"

namespace chaosweep::h5 {

namespace {

std::shared_ptr<detail::FileState> new_state(const std::string& path, bool parallel,
                                             bool writable) {
  detail::silence_hdf5_errors();
  auto state = std::make_shared<detail::FileState>();
  state->path = path;
  state->parallel = parallel;
  state->writable = writable;
  return state;
}

/// Records `comm` with this process's rank and the size, after checking MPI is running.
void join(detail::FileState& state, MPI_Comm comm, const std::string& what) {
  int initialized = 0;
  detail::check_mpi(MPI_Initialized(&initialized), what, state.path);
  if (!initialized) detail::fail(what, state.path, "MPI is not initialised");
  detail::check_mpi(MPI_Comm_rank(comm, &state.rank), what, state.path);
  detail::check_mpi(MPI_Comm_size(comm, &state.ranks), what, state.path);
  state.comm = comm;
}

/// File-access property list for MPI-IO on `comm`.
Handle mpio_access(MPI_Comm comm, const std::string& what, const std::string& path) {
  Handle access(detail::check_id(H5Pcreate(H5P_FILE_ACCESS), what, path));
  detail::check(H5Pset_fapl_mpio(access.get(), comm, MPI_INFO_NULL), what, path);
  return access;
}

}  // namespace

File File::create_parallel(const std::string& path, MPI_Comm comm, std::uint64_t user_block) {
  const std::string what = "creating file for parallel writing";
  auto state = new_state(path, true, true);
  join(*state, comm, what);
  Handle access = mpio_access(comm, what, path);
  Handle creation(detail::check_id(H5Pcreate(H5P_FILE_CREATE), what, path));
  if (user_block > 0) detail::check(H5Pset_userblock(creation.get(), user_block), what, path);
  state->id = Handle(detail::check_id(
      H5Fcreate(path.c_str(), H5F_ACC_TRUNC, creation.get(), access.get()), what, path));
  return File(std::move(state));
}

File File::create_serial(const std::string& path) {
  const std::string what = "creating file";
  auto state = new_state(path, false, true);
  state->id = Handle(detail::check_id(
      H5Fcreate(path.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT), what, path));
  return File(std::move(state));
}

File File::open_read(const std::string& path) {
  const std::string what = "opening file for reading";
  auto state = new_state(path, false, false);
  state->id =
      Handle(detail::check_id(H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT), what, path));
  return File(std::move(state));
}

File File::open_read_parallel(const std::string& path, MPI_Comm comm) {
  const std::string what = "opening file for parallel reading";
  auto state = new_state(path, true, false);
  join(*state, comm, what);
  Handle access = mpio_access(comm, what, path);
  state->id =
      Handle(detail::check_id(H5Fopen(path.c_str(), H5F_ACC_RDONLY, access.get()), what, path));
  return File(std::move(state));
}

File::File(std::shared_ptr<detail::FileState> state) : state_(std::move(state)) {
  state_->uncaught_at_open = std::uncaught_exceptions();
}

File::File(File&&) noexcept = default;

File& File::operator=(File&& other) noexcept {
  if (this != &other) {
    File old(std::move(*this));
    state_ = std::move(other.state_);
  }
  return *this;
}

File::~File() {
  if (!is_open()) return;
  if (state_->parallel && std::uncaught_exceptions() > state_->uncaught_at_open) {
    state_->id.release();  // a lone rank must not enter the collective close
    return;
  }
  try {
    close();
  } catch (...) {
    state_->id.reset();
  }
}

Group File::root() const {
  const std::string where = path() + ":/";
  if (!is_open()) detail::fail("opening root group", where, "the file is closed");
  Handle id(
      detail::check_id(H5Gopen2(state_->id.get(), "/", H5P_DEFAULT), "opening root group", where));
  return Group(state_, std::move(id), "/");
}

Group File::group(const std::string& path) const { return root().open_group(path); }

void File::flush() {
  if (!is_open()) detail::fail("flushing file", path(), "the file is closed");
  detail::check(H5Fflush(state_->id.get(), H5F_SCOPE_GLOBAL), "flushing file", path());
}

void File::close() {
  if (!is_open()) return;
  detail::FileState& state = *state_;
  const unsigned kinds =
      H5F_OBJ_DATASET | H5F_OBJ_GROUP | H5F_OBJ_DATATYPE | H5F_OBJ_ATTR | H5F_OBJ_LOCAL;
  const ssize_t still_open = H5Fget_obj_count(state.id.get(), kinds);
  if (still_open < 0) detail::fail("closing file", state.path);
  if (still_open > 0) {
    detail::fail("closing file", state.path,
                 std::to_string(still_open) + " of its groups or datasets are still open");
  }
  state.id.close("closing file", state.path);
  if (state.deferred_string_calls > 0) detail::write_deferred_strings(state);
}

bool File::is_open() const { return state_ && state_->id.valid(); }
bool File::is_parallel() const { return state_ && state_->parallel; }
int File::rank() const { return state_ ? state_->rank : 0; }
int File::ranks() const { return state_ ? state_->ranks : 1; }

const std::string& File::path() const {
  static const std::string none;
  return state_ ? state_->path : none;
}

TransferCounts File::transfers() const { return state_ ? state_->transfers : TransferCounts{}; }

}  // namespace chaosweep::h5
