// linear: a linear system with a constant forcing, the test model whose statistics are known
// in closed form.
//
//   dx/dt = A x + f d,    x in R^n
//
// A is the n x n matrix `matrix` (given as its rows), f the scalar `forcing` and d the vector
// `forcing_direction` (n components, used as given, not normalised). The spec is refused
// unless every eigenvalue of A has a negative real part: then every trajectory settles on the
// fixed point x* = -A^-1 f d, the time means converge to it, the response to the forcing is
// exactly d x* / d f = -A^-1 d, and the Lyapunov exponents are the real parts of the
// eigenvalues of A (the tangent-linear map is A itself). With additive noise it is the
// multivariate Ornstein-Uhlenbeck process (Gardiner, Handbook of Stochastic Methods).
//
// Parameters (defaults): matrix [[-1, 2], [-2, -1]] (a damped rotation, eigenvalues -1 +- 2i;
// structural: its size sets the state dimension), forcing 0, forcing_direction [1, 0].
//
// Observables: the state variables x0 ... x{n-1}; no derived observables.
// Pure numerics: no allocation in rhs() or tangent(), no I/O.
#include <Eigen/Dense>

#include <cmath>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include "models/model.hpp"
#include "models/parameter_access.hpp"

namespace chaosweep::models {
namespace {

/// The side n of a square matrix stored row by row in `values` (its size n^2), or -1.
int matrix_side(const std::vector<double>& values) {
  const int n = static_cast<int>(std::lround(std::sqrt(static_cast<double>(values.size()))));
  return n >= 1 && static_cast<std::size_t>(n) * static_cast<std::size_t>(n) == values.size() ? n : -1;
}

/// A generous bound for classical RK4 on eigenvalues lambda with negative real part: the
/// stability region holds every such h lambda with |h lambda| <= 2.5 that lies within 45
/// degrees of the negative real axis, and reaches 2.83 along the imaginary axis (from memory,
/// common textbook plots of the RK4 region); 2.5 / max |lambda| is taken for every direction.
constexpr double kRk4Radius = 2.5;

class Linear final : public Model {
 public:
  explicit Linear(const ParameterValues& v)
      : a_(v.at("matrix")),
        n_(matrix_side(a_)),
        forcing_(scalar_parameter(v, "forcing")) {
    if (n_ < 1) {
      throw std::invalid_argument("linear: `matrix` must be square (its rows of equal length, "
                                  "as many as there are rows).");
    }
    direction_ = v.at("forcing_direction");
    if (direction_.size() != static_cast<std::size_t>(n_)) {
      throw std::invalid_argument("linear: `forcing_direction` needs " + std::to_string(n_) +
                                  " components (the matrix is " + std::to_string(n_) + " x " +
                                  std::to_string(n_) + "), got " +
                                  std::to_string(direction_.size()) + ".");
    }
    const Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>
        a(a_.data(), n_, n_);
    const Eigen::VectorXcd eigenvalues = a.eigenvalues();
    double largest_real = -1e300;
    for (Eigen::Index i = 0; i < eigenvalues.size(); ++i) {
      largest_real = std::max(largest_real, eigenvalues[i].real());
      radius_ = std::max(radius_, std::abs(eigenvalues[i]));
    }
    if (!(largest_real < 0.0)) {
      char text[64];
      std::snprintf(text, sizeof text, "%.6g", largest_real);
      throw std::invalid_argument(std::string("linear: `matrix` has an eigenvalue with real part ") +
                                  text + " >= 0, so trajectories do not settle; every "
                                  "eigenvalue needs a negative real part.");
    }
    for (int i = 0; i < n_; ++i) {
      observables_.push_back({"x" + std::to_string(i), "component " + std::to_string(i) + " of the state"});
    }
  }

  int state_dim() const override { return n_; }
  const std::vector<ObservableInfo>& observables() const override { return observables_; }

  // x, dxdt: [n][width]. Row i of A times the state, then the forcing, member by member.
  void rhs(const double* x, double* dxdt, int width) const override {
    for (int i = 0; i < n_; ++i) {
      double* out = dxdt + static_cast<std::ptrdiff_t>(i) * width;
      const double tendency = forcing_ * direction_[static_cast<std::size_t>(i)];
      for (int m = 0; m < width; ++m) out[m] = tendency;
      for (int j = 0; j < n_; ++j) {
        const double aij = a_[static_cast<std::size_t>(i * n_ + j)];
        const double* xj = x + static_cast<std::ptrdiff_t>(j) * width;
        for (int m = 0; m < width; ++m) out[m] += aij * xj[m];
      }
    }
  }

  bool has_tangent() const override { return true; }

  // J(x) = A everywhere: out = A v.
  void tangent(const double* x, const double* v, double* out, int width) const override {
    (void)x;
    for (int i = 0; i < n_; ++i) {
      double* o = out + static_cast<std::ptrdiff_t>(i) * width;
      for (int m = 0; m < width; ++m) o[m] = 0.0;
      for (int j = 0; j < n_; ++j) {
        const double aij = a_[static_cast<std::size_t>(i * n_ + j)];
        const double* vj = v + static_cast<std::ptrdiff_t>(j) * width;
        for (int m = 0; m < width; ++m) o[m] += aij * vj[m];
      }
    }
  }

  double max_stable_dt() const override { return kRk4Radius / radius_; }

  std::vector<double> default_initial_state() const override {
    return std::vector<double>(static_cast<std::size_t>(n_), 0.0);
  }

  // Slot 0: forcing (the matrix and the direction are not scalars: no slot).
  int parameter_slot(const std::string& name) const override { return name == "forcing" ? 0 : -1; }

  void set_parameter(int slot, double value) override {
    if (slot != 0) Model::set_parameter(slot, value);
    forcing_ = value;
  }

 private:
  std::vector<double> a_;  // row by row
  int n_;
  double forcing_;
  std::vector<double> direction_;
  double radius_ = 0.0;  // largest |eigenvalue| of A
  std::vector<ObservableInfo> observables_;
};

ModelInfo linear_info() {
  ModelInfo info;
  info.name = "linear";
  info.description =
      "linear system dx/dt = A x + f d with every eigenvalue of A in the left half-plane: "
      "fixed point -A^-1 f d, Lyapunov exponents the real parts of A's eigenvalues";
  info.parameters = {
      {"matrix", {-1.0, 2.0, -2.0, -1.0}, -1e300, 1e300, false, true,
       "the matrix A, given as its rows ([[a00, a01], [a10, a11]]); its size sets the state "
       "dimension", ParameterShape::matrix},
      {"forcing", {0.0}, -1e300, 1e300, false, false, "strength f of the constant forcing f*d"},
      {"forcing_direction", {1.0, 0.0}, -1e300, 1e300, false, false,
       "direction d of the forcing, one component per state variable, used as given",
       ParameterShape::list},
  };
  info.make = [](const ParameterValues& v) -> std::unique_ptr<Model> {
    return std::make_unique<Linear>(v);
  };
  info.state_dim = [](const ParameterValues& v) { return matrix_side(v.at("matrix")); };
  // forcing * forcing_direction is the only place `forcing` enters
  info.additive_forcings = {{"forcing", [](const ParameterValues& v) {
                               return v.at("forcing_direction");
                             }}};
  return info;
}

const Registrar registrar(linear_info());

}  // namespace
}  // namespace chaosweep::models
