// Closing HDF5 identifiers with the close call that matches their kind.
#include "h5/handle.hpp"

#include "h5/detail.hpp"

namespace chaosweep::h5 {

namespace {

herr_t close_id(hid_t id) {
  switch (H5Iget_type(id)) {
    case H5I_FILE: return H5Fclose(id);
    case H5I_GROUP: return H5Gclose(id);
    case H5I_DATASET: return H5Dclose(id);
    case H5I_ATTR: return H5Aclose(id);
    case H5I_DATASPACE: return H5Sclose(id);
    case H5I_DATATYPE: return H5Tclose(id);
    case H5I_GENPROP_LST: return H5Pclose(id);
    default: return H5Idec_ref(id) < 0 ? -1 : 0;
  }
}

}  // namespace

Handle& Handle::operator=(Handle&& other) noexcept {
  if (this != &other) {
    reset();
    id_ = other.release();
  }
  return *this;
}

std::int64_t Handle::release() noexcept {
  const std::int64_t id = id_;
  id_ = -1;
  return id;
}

void Handle::reset() noexcept {
  if (id_ >= 0) {
    close_id(id_);
    H5Eclear2(H5E_DEFAULT);
  }
  id_ = -1;
}

void Handle::close(const std::string& what, const std::string& where) {
  if (id_ < 0) return;
  const hid_t id = release();
  detail::check(close_id(id), what, where);
}

}  // namespace chaosweep::h5
