// MPI wrapper: every call is checked; a failure becomes chaosweep::IoError with MPI's message.
#include "parallel/communicator.hpp"

#include <mpi.h>

#include <cstdio>
#include <cstdlib>
#include <exception>

#include "core/error.hpp"

namespace chaosweep::parallel {
namespace {

void check(int rc, const char* what) {
  if (rc == MPI_SUCCESS) return;
  char text[MPI_MAX_ERROR_STRING];
  int len = 0;
  MPI_Error_string(rc, text, &len);
  throw IoError(std::string("MPI ") + what + " failed: " + std::string(text, len));
}

template <typename T>
std::vector<T> allgather(const std::vector<T>& local, MPI_Datatype type, int size) {
  const int n = static_cast<int>(local.size());
  std::vector<int> counts(size), displs(size);
  check(MPI_Allgather(&n, 1, MPI_INT, counts.data(), 1, MPI_INT, MPI_COMM_WORLD), "Allgather");
  std::int64_t total = 0;
  for (int r = 0; r < size; ++r) {
    displs[r] = static_cast<int>(total);
    total += counts[r];
  }
  if (total > INT32_MAX) throw IoError("MPI Allgatherv: more than 2^31 values to gather");
  std::vector<T> all(static_cast<std::size_t>(total));
  check(MPI_Allgatherv(local.data(), n, type, all.data(), counts.data(), displs.data(), type,
                       MPI_COMM_WORLD),
        "Allgatherv");
  return all;
}

/// The combine function of the collective in progress: MPI's user operations take no context.
const Communicator::Combine* active_combine = nullptr;
std::size_t active_block = 0;

void combine_blocks(void* in, void* inout, int* len, MPI_Datatype*) {
  // MPI: inout = in (+) inout, `in` holding the lower ranks' part.
  const double* left = static_cast<const double*>(in);
  double* right = static_cast<double*>(inout);
  try {
    for (int i = 0; i < *len; ++i) {
      (*active_combine)(left + i * active_block, right + i * active_block);
    }
  } catch (const std::exception& e) {  // nothing may be thrown through MPI
    std::fprintf(stderr, "chaosweep: internal error in the reduction: %s\n", e.what());
    MPI_Abort(MPI_COMM_WORLD, 1);
  }
}

}  // namespace

Session::Session(int* argc, char*** argv) {
  int provided = 0;
  check(MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided), "Init");
  MPI_Comm_set_errhandler(MPI_COMM_WORLD, MPI_ERRORS_RETURN);
}

Session::~Session() {
  int finalized = 0;
  MPI_Finalized(&finalized);
  if (!finalized) MPI_Finalize();
}

Communicator::Communicator() {
  check(MPI_Comm_rank(MPI_COMM_WORLD, &rank_), "Comm_rank");
  check(MPI_Comm_size(MPI_COMM_WORLD, &size_), "Comm_size");
}

std::vector<std::int64_t> Communicator::allgather_in_rank_order(
    const std::vector<std::int64_t>& local) const {
  if (serial_) return local;
  return allgather(local, MPI_INT64_T, size_);
}

std::vector<std::int64_t> Communicator::exchange(
    const std::vector<std::vector<std::int64_t>>& to_rank) const {
  if (to_rank.size() != static_cast<std::size_t>(size_)) {
    throw std::logic_error("exchange: one vector per rank expected");
  }
  if (serial_) return to_rank[0];
  std::vector<int> send_counts(size_), send_displs(size_), recv_counts(size_), recv_displs(size_);
  std::vector<std::int64_t> sent;
  for (int r = 0; r < size_; ++r) {
    if (sent.size() + to_rank[r].size() > static_cast<std::size_t>(INT32_MAX)) {
      throw IoError("MPI Alltoallv: more than 2^31 values to send");
    }
    send_displs[r] = static_cast<int>(sent.size());
    send_counts[r] = static_cast<int>(to_rank[r].size());
    sent.insert(sent.end(), to_rank[r].begin(), to_rank[r].end());
  }
  check(MPI_Alltoall(send_counts.data(), 1, MPI_INT, recv_counts.data(), 1, MPI_INT,
                     MPI_COMM_WORLD),
        "Alltoall");
  std::int64_t total = 0;
  for (int r = 0; r < size_; ++r) {
    recv_displs[r] = static_cast<int>(total);
    total += recv_counts[r];
  }
  if (total > INT32_MAX) throw IoError("MPI Alltoallv: more than 2^31 values to receive");
  std::vector<std::int64_t> received(static_cast<std::size_t>(total));
  check(MPI_Alltoallv(sent.data(), send_counts.data(), send_displs.data(), MPI_INT64_T,
                      received.data(), recv_counts.data(), recv_displs.data(), MPI_INT64_T,
                      MPI_COMM_WORLD),
        "Alltoallv");
  return received;
}

std::vector<std::string> Communicator::gather_on_root(const std::string& local) const {
  if (serial_) return {local};
  if (local.size() > static_cast<std::size_t>(INT32_MAX)) {
    throw IoError("MPI Gatherv: more than 2^31 bytes from one rank");
  }
  const int n = static_cast<int>(local.size());
  std::vector<int> counts(rank_ == 0 ? size_ : 0), displs(counts.size());
  check(MPI_Gather(&n, 1, MPI_INT, counts.data(), 1, MPI_INT, 0, MPI_COMM_WORLD), "Gather");
  std::size_t total = 0;
  for (std::size_t r = 0; r < counts.size(); ++r) {
    displs[r] = static_cast<int>(total);
    total += static_cast<std::size_t>(counts[r]);
    if (total > static_cast<std::size_t>(INT32_MAX)) {
      throw IoError("MPI Gatherv: more than 2^31 bytes to gather");
    }
  }
  std::string all(total, '\0');
  check(MPI_Gatherv(local.data(), n, MPI_CHAR, all.data(), counts.data(), displs.data(), MPI_CHAR,
                    0, MPI_COMM_WORLD),
        "Gatherv");
  std::vector<std::string> texts;
  for (std::size_t r = 0; r < counts.size(); ++r) texts.push_back(all.substr(displs[r], counts[r]));
  return texts;
}

std::vector<double> Communicator::combine_in_rank_order(const std::vector<double>& local,
                                                        const Combine& combine) const {
  if (serial_ || size_ == 1 || local.empty()) return local;
  if (local.size() > static_cast<std::size_t>(INT32_MAX)) {
    throw IoError("MPI Allreduce: a block of more than 2^31 values to combine");
  }
  MPI_Datatype block;
  check(MPI_Type_contiguous(static_cast<int>(local.size()), MPI_DOUBLE, &block), "Type_contiguous");
  check(MPI_Type_commit(&block), "Type_commit");
  MPI_Op op;
  check(MPI_Op_create(&combine_blocks, /*commute=*/0, &op), "Op_create");
  active_combine = &combine;
  active_block = local.size();
  std::vector<double> out(local.size());
  const int rc = MPI_Allreduce(local.data(), out.data(), 1, block, op, MPI_COMM_WORLD);
  active_combine = nullptr;
  MPI_Op_free(&op);
  MPI_Type_free(&block);
  check(rc, "Allreduce");
  return out;
}

std::vector<std::int64_t> Communicator::sum(const std::vector<std::int64_t>& values) const {
  if (serial_ || values.empty()) return values;
  if (values.size() > static_cast<std::size_t>(INT32_MAX)) {
    throw IoError("MPI Allreduce: more than 2^31 values to sum");
  }
  std::vector<std::int64_t> out(values.size());
  check(MPI_Allreduce(values.data(), out.data(), static_cast<int>(values.size()), MPI_INT64_T,
                      MPI_SUM, MPI_COMM_WORLD),
        "Allreduce");
  return out;
}

Communicator::RoundAgreement Communicator::agree(bool stop, bool checkpoint, bool done) const {
  if (serial_) return RoundAgreement{stop, checkpoint, done};
  int in[3] = {stop ? 1 : 0, checkpoint ? 1 : 0, done ? 0 : 1}, out[3] = {0, 0, 0};
  check(MPI_Allreduce(in, out, 3, MPI_INT, MPI_MAX, MPI_COMM_WORLD), "Allreduce");
  RoundAgreement a;
  a.stop = out[0] != 0;
  a.checkpoint = out[1] != 0;
  a.all_done = out[2] == 0;
  return a;
}

bool Communicator::any(bool flag) const {
  if (serial_) return flag;
  int in = flag ? 1 : 0, out = 0;
  check(MPI_Allreduce(&in, &out, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD), "Allreduce");
  return out != 0;
}

double Communicator::max(double value) const {
  if (serial_) return value;
  double out = 0;
  check(MPI_Allreduce(&value, &out, 1, MPI_DOUBLE, MPI_MAX, MPI_COMM_WORLD), "Allreduce");
  return out;
}

std::int64_t Communicator::sum(std::int64_t value) const {
  if (serial_) return value;
  std::int64_t out = 0;
  check(MPI_Allreduce(&value, &out, 1, MPI_INT64_T, MPI_SUM, MPI_COMM_WORLD), "Allreduce");
  return out;
}

std::string Communicator::broadcast(const std::string& value) const {
  if (serial_) return value;
  std::int64_t n = static_cast<std::int64_t>(value.size());
  check(MPI_Bcast(&n, 1, MPI_INT64_T, 0, MPI_COMM_WORLD), "Bcast");
  std::string out = rank_ == 0 ? value : std::string(static_cast<std::size_t>(n), '\0');
  check(MPI_Bcast(out.data(), static_cast<int>(n), MPI_CHAR, 0, MPI_COMM_WORLD), "Bcast");
  return out;
}

void Communicator::barrier() const {
  if (!serial_) check(MPI_Barrier(MPI_COMM_WORLD), "Barrier");
}

void Communicator::abort(int code) const {
  if (!serial_) MPI_Abort(MPI_COMM_WORLD, code);
  std::_Exit(code);
}

}  // namespace chaosweep::parallel
