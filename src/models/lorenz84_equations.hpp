// The Lorenz (1984) general-circulation equations for one member, written once for every
// caller: the model's batched rhs() (lorenz84.cpp) and the fused batch kernel (run/) evaluate
// exactly this code, so the two paths agree bit for bit. Pure numerics: no allocation, no I/O.
//
//   dx/dt = -y^2 - z^2 - a x + a F
//   dy/dt = x y - b x z - y + G
//   dz/dt = b x y + x z - z
//
// E. N. Lorenz (1984), Tellus 36A, 98; the model is described in lorenz84.cpp.
#pragma once

#include <string>

#include "models/model.hpp"
#include "models/parameter_access.hpp"

namespace chaosweep::models {

struct Lorenz84Equations {
  static constexpr int kDim = 3;
  double a = 0.25, b = 4.0, aF = 2.0, G = 1.0;  // aF = a * F
  double F = 8.0;

  /// From complete parameter values (a, b, F, G).
  static Lorenz84Equations from(const ParameterValues& v) {
    Lorenz84Equations e;
    e.a = scalar_parameter(v, "a");
    e.b = scalar_parameter(v, "b");
    e.F = scalar_parameter(v, "F");
    e.aF = e.a * e.F;
    e.G = scalar_parameter(v, "G");
    return e;
  }

  /// The slot of a scalar parameter (a, b, F, G), -1 for none; set(slot, v) then updates the
  /// equations as from() computes them.
  static int slot(const std::string& name) {
    static const char* const names[] = {"a", "b", "F", "G"};
    for (int i = 0; i < 4; ++i) {
      if (name == names[i]) return i;
    }
    return -1;
  }
  void set(int slot, double value) {
    switch (slot) {
      case 0: a = value; break;
      case 1: b = value; break;
      case 2: F = value; break;
      case 3: G = value; break;
      default: return;
    }
    aF = a * F;
  }

  /// dx/dt at state s = (x, y, z); T is double (one member) or a vector of members' values
  /// (GCC vector extension), element-wise the same operations.
  template <typename T>
  void rhs(const T (&s)[3], T (&ds)[3]) const {
    ds[0] = -s[1] * s[1] - s[2] * s[2] - a * s[0] + aF;
    ds[1] = s[0] * s[1] - b * s[0] * s[2] - s[1] + G;
    ds[2] = b * s[0] * s[1] + s[0] * s[2] - s[2];
  }

  /// out = J(s) v, the Jacobian of rhs() at s:
  ///   [ -a          -2y       -2z    ]
  ///   [ y - b z     x - 1     -b x   ]
  ///   [ b y + z     b x       x - 1  ]
  template <typename T>
  void tangent(const T (&s)[3], const T (&v)[3], T (&out)[3]) const {
    out[0] = -a * v[0] - 2.0 * s[1] * v[1] - 2.0 * s[2] * v[2];
    out[1] = (s[1] - b * s[2]) * v[0] + (s[0] - 1.0) * v[1] - b * s[0] * v[2];
    out[2] = (b * s[1] + s[2]) * v[0] + b * s[0] * v[1] + (s[0] - 1.0) * v[2];
  }
};

}  // namespace chaosweep::models
