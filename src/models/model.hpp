// The model interface: every chaotic model the tool integrates implements this.
// Pure numerics: no MPI, no HDF5, no YAML, no logging, no allocation in the hot calls.
//
// Batch layout (structure of arrays). A batch holds `width` members; component i of member m
// is stored at x[i * width + m]. Every batched call treats members independently: the value
// computed for member m depends only on column m, never on m or on width, so a member's result
// does not depend on where it sits in a batch. Callers pass full-width batches (padding if
// needed), so every member takes the same vectorised path.
#pragma once

#include <functional>
#include <map>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

namespace chaosweep::models {

/// Parameter values by name. Every parameter is a vector; scalars have length 1.
using ParameterValues = std::map<std::string, std::vector<double>>;

/// How many components a parameter has: as many as its default (fixed), any number from one
/// (list), or a square matrix given as its rows and stored row by row (matrix).
enum class ParameterShape { fixed, list, matrix };

/// Description of one model parameter.
struct ParameterInfo {
  std::string name;
  std::vector<double> default_value;  // length = number of components (1 for scalars)
  double min = -1e300;                // inclusive bounds, applied to every component
  double max = 1e300;
  bool integer = false;     // must hold an integer value (e.g. lorenz96 n)
  bool structural = false;  // changes the state dimension: may not be swept or scheduled
  std::string long_name;    // one line, for --help, archives and errors
  ParameterShape shape = ParameterShape::fixed;
};

/// A named quantity computed from the state: the state variables first, then derived ones.
struct ObservableInfo {
  std::string name;
  std::string long_name;
};

/// One model instance with fixed parameter values.
class Model {
 public:
  virtual ~Model() = default;

  /// Number of state variables per member.
  virtual int state_dim() const = 0;

  /// Observables: the first state_dim() entries are the state variables in order, the rest
  /// are derived quantities computed by derived().
  virtual const std::vector<ObservableInfo>& observables() const = 0;

  /// Right-hand side dx/dt over a batch: x and dxdt are [state_dim][width] (SoA).
  /// No allocation, no I/O, deterministic; dxdt must not alias x.
  virtual void rhs(const double* x, double* dxdt, int width) const = 0;

  /// Doubles of scratch space fused_rk4_step() needs for a batch of `width`, or 0 when the
  /// model has no fused step (the default).
  virtual std::size_t fused_rk4_scratch(int width) const {
    (void)width;
    return 0;
  }

  /// One classical RK4 step of the batch x ([state_dim][width]) in place, with the operations
  /// per member of integrators::Rk4Batch::step over rhs() (so bitwise its result), taken in
  /// an order that suits the model's structure; false (x untouched) when it does not apply to
  /// this width, and Rk4Batch steps as usual. `scratch` holds fused_rk4_scratch(width) doubles.
  virtual bool fused_rk4_step(double* x, double dt, int width, double* scratch) const {
    (void)x; (void)dt; (void)width; (void)scratch;
    return false;
  }

  /// Told before the right-hand sides of RK4 stage 1, 2 (k3 shares its time) and 4 of a
  /// scheduled step, so that a time-dependent parameter can be set (set_parameter).
  class StageHook {
   public:
    virtual void before_stage(int stage) = 0;

   protected:
    ~StageHook() = default;
  };

  /// fused_rk4_step with time-dependent parameters: calls hook.before_stage(1), (2) and (4)
  /// and takes each stage's parameters as they are after its call, so that x gets bitwise
  /// what Rk4Batch::step_at gives it under the same hook (the parameters are left as stage 4
  /// set them). False (x untouched, hook not called) when the model has no such step.
  virtual bool fused_rk4_step_at(double* x, double dt, int width, double* scratch,
                                 StageHook& hook) const {
    (void)x; (void)dt; (void)width; (void)scratch; (void)hook;
    return false;
  }

  /// One step of integrators::TangentRk4Batch::step in place: x ([state_dim][width]) by RK4
  /// and each of the `vectors` tangent vectors (tangents: [vectors][state_dim][width]) by the
  /// tangent of the RK4 map, with the same operations per member (so bitwise its result), in
  /// an order that suits the model; false (nothing touched) when it does not apply to this
  /// width, and the stepper takes its generic stages.
  /// `scratch` holds fused_tangent_rk4_scratch(width) doubles.
  virtual bool fused_tangent_rk4_step(double* x, double* tangents, int vectors, double dt,
                                      int width, double* scratch) const {
    (void)x; (void)tangents; (void)vectors; (void)dt; (void)width; (void)scratch;
    return false;
  }
  /// Doubles of scratch space fused_tangent_rk4_step() needs for a batch of `width` (0: none).
  virtual std::size_t fused_tangent_rk4_scratch(int width) const {
    (void)width;
    return 0;
  }

  /// Derived observables over a batch: out is [observables().size() - state_dim()][width].
  /// They depend on the state and structural parameters only (snapshots of a run with a
  /// time-dependent parameter evaluate them with the parameter's value at t = 0).
  virtual void derived(const double* x, double* out, int width) const {
    (void)x; (void)out; (void)width;
  }

  /// Whether tangent() is implemented (the tangent-linear product J(x) v).
  virtual bool has_tangent() const { return false; }

  /// Tangent-linear product over a batch: out = J(x) v, where J(x) = d rhs / dx is the
  /// Jacobian of rhs() at x, member by member. x, v and out are [state_dim][width] (SoA, the
  /// layout of rhs()); column m of out depends only on column m of x and v. No allocation, no
  /// I/O, deterministic; out must alias neither x nor v. Only models whose has_tangent() is true
  /// implement it; the base version throws std::logic_error (a caller error, never a data one).
  virtual void tangent(const double* x, const double* v, double* out, int width) const {
    (void)x; (void)v; (void)out; (void)width;
    throw std::logic_error("this model has no tangent-linear product");
  }

  /// Slot through which set_parameter() changes the scalar, non-structural parameter `name`
  /// in place, or -1 when this model cannot (then the parameter cannot follow a schedule).
  /// Resolved once per case, so the hot path never looks names up.
  virtual int parameter_slot(const std::string& name) const {
    (void)name;
    return -1;
  }

  /// Sets the parameter of `slot` (from parameter_slot()) to `value`: afterwards every call
  /// computes bitwise what a model built with that value computes. O(1), no allocation, no
  /// I/O: it runs between RK4 stages for a time-dependent parameter (spec `schedule:`).
  /// The base version throws std::logic_error (a caller error).
  virtual void set_parameter(int slot, double value) {
    (void)slot; (void)value;
    throw std::logic_error("this model cannot change a parameter in place");
  }

  /// Largest time step for which classical RK4 is clearly stable on this model's attractor
  /// (a generous bound: a step above it is refused as a spec error).
  virtual double max_stable_dt() const = 0;

  /// A state from which the model reaches its attractor (for initial_state: {from: attractor}).
  virtual std::vector<double> default_initial_state() const = 0;
};

/// A fused batch kernel written for a model's equations (run/): the right-hand side and every
/// per-step accumulator in registers, bitwise equal to the generic path. A model declares the
/// one it has in its ModelInfo; the rest take the generic path.
enum class FastKernel {
  none,
  convection_loop,  // the three-variable loop with constant forcing (run/fused_kernel.cpp)
  circulation,      // the three-variable circulation model (the same fused kernel)
  ring,             // the ring of sites (run/ring_kernel.cpp)
};

/// A parameter that enters the equations as an additive forcing: rhs(x; p) = g(x) + p e, with
/// e (the forcing direction) independent of the state and of p. The response of the statistics
/// to p can then be predicted from the unforced fluctuations (statistics.response).
struct AdditiveForcing {
  std::string parameter;
  /// e for complete parameter values (length: the state dimension for those values).
  std::function<std::vector<double>(const ParameterValues& values)> direction;
};

/// Registry entry: a model's name, documentation, parameters and factory.
struct ModelInfo {
  std::string name;
  std::string description;  // one line, with the equations' source
  std::vector<ParameterInfo> parameters;
  /// Builds an instance. `values` holds every parameter (defaults filled in) already checked
  /// against ParameterInfo bounds; the factory may throw std::invalid_argument for
  /// inconsistent combinations (message: one sentence).
  std::function<std::unique_ptr<Model>(const ParameterValues& values)> make;
  /// State dimension for the given complete parameter values (without building the model).
  std::function<int(const ParameterValues& values)> state_dim;
  FastKernel fast_kernel = FastKernel::none;  // its fused kernel, if any
  /// The parameters that enter as additive forcings, in the order the archive lists them.
  std::vector<AdditiveForcing> additive_forcings;
};

/// All models compiled into the program. Models add themselves from their own file with a
/// static Registrar, so adding a model is one file (plus its line in models/CMakeLists.txt).
class Registry {
 public:
  static Registry& instance();
  void add(ModelInfo info);
  const ModelInfo* find(const std::string& name) const;  // nullptr if unknown
  std::vector<std::string> names() const;                 // sorted

 private:
  std::map<std::string, ModelInfo> models_;
};

struct Registrar {
  explicit Registrar(ModelInfo info) { Registry::instance().add(std::move(info)); }
};

/// The default values of every parameter of `info`, overridden by `overrides`.
ParameterValues complete_parameters(const ModelInfo& info, const ParameterValues& overrides);

}  // namespace chaosweep::models
