// The forced Lorenz (1963) equations for one member, written once for every caller: the
// model's batched rhs() (lorenz63.cpp) and the fused batch kernels (run/) evaluate exactly
// this code, so the two paths agree bit for bit. Pure numerics: no allocation, no I/O.
//
//   dx/dt = sigma (y - x)      + f d0
//   dy/dt = x (rho - z) - y    + f d1
//   dz/dt = x y - beta z       + f d2
//
// E. N. Lorenz (1963), J. Atmos. Sci. 20, 130; the constant tendency f d is described in
// lorenz63.cpp.
#pragma once

#include <string>

#include "models/model.hpp"
#include "models/parameter_access.hpp"

namespace chaosweep::models {

struct Lorenz63Equations {
  static constexpr int kDim = 3;
  double sigma = 10.0, rho = 28.0, beta = 8.0 / 3.0;
  double tendency[3] = {0.0, 0.0, 0.0};  // forcing * forcing_direction
  double direction[3] = {1.0, 0.0, 0.0};  // forcing_direction (for set())

  /// From complete parameter values (sigma, rho, beta, forcing, forcing_direction).
  static Lorenz63Equations from(const ParameterValues& v) {
    Lorenz63Equations e;
    e.sigma = scalar_parameter(v, "sigma");
    e.rho = scalar_parameter(v, "rho");
    e.beta = scalar_parameter(v, "beta");
    const double f = scalar_parameter(v, "forcing");
    const std::vector<double>& d = vector_parameter(v, "forcing_direction", 3);
    for (int i = 0; i < 3; ++i) {
      e.direction[i] = d[i];
      e.tendency[i] = f * d[i];
    }
    return e;
  }

  /// The slot of a scalar parameter that can change in time (sigma, rho, beta, forcing), -1
  /// for the others; set(slot, v) then updates the equations as from() computes them.
  static int slot(const std::string& name) {
    static const char* const names[] = {"sigma", "rho", "beta", "forcing"};
    for (int i = 0; i < 4; ++i) {
      if (name == names[i]) return i;
    }
    return -1;
  }
  void set(int slot, double value) {
    switch (slot) {
      case 0: sigma = value; return;
      case 1: rho = value; return;
      case 2: beta = value; return;
      case 3:
        for (int i = 0; i < 3; ++i) tendency[i] = value * direction[i];
        return;
      default: return;
    }
  }

  /// dx/dt at state s = (x, y, z); T is double (one member) or a vector of members' values
  /// (GCC vector extension), element-wise the same operations.
  template <typename T>
  void rhs(const T (&s)[3], T (&ds)[3]) const {
    ds[0] = sigma * (s[1] - s[0]) + tendency[0];
    ds[1] = s[0] * (rho - s[2]) - s[1] + tendency[1];
    ds[2] = s[0] * s[1] - beta * s[2] + tendency[2];
  }

  /// out = J(s) v, the Jacobian of rhs() at s (the constant forcing drops out):
  ///   [ -sigma     sigma   0    ]
  ///   [ rho - z    -1      -x   ]
  ///   [ y          x       -beta]
  template <typename T>
  void tangent(const T (&s)[3], const T (&v)[3], T (&out)[3]) const {
    out[0] = sigma * (v[1] - v[0]);
    out[1] = (rho - s[2]) * v[0] - v[1] - s[0] * v[2];
    out[2] = s[1] * v[0] + s[0] * v[1] - beta * v[2];
  }
};

}  // namespace chaosweep::models
