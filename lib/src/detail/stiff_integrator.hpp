// A stiff-capable integrator with dense output for the ODE path: Boost.Odeint's Rosenbrock 4
// (E. Hairer and G. Wanner, Solving Ordinary Differential Equations II, 2nd ed., Springer 1996,
// sec. IV.7; odeint's rosenbrock4 with its error controller and dense output) with a
// forward-difference Jacobian. Its interface takes plain arrays: odeint's Rosenbrock stepper is
// built on Boost.uBLAS, whose allocator use in Boost 1.74 does not compile as C++20, so the
// implementation lives in a translation unit of its own built as C++17.
#pragma once

#include <functional>
#include <memory>
#include <utility>
#include <vector>

namespace pulsewise::detail {

class StiffIntegrator {
 public:
  using State = std::vector<double>;
  // dz/dt = rhs(z); the system is autonomous between events.
  using Rhs = std::function<void(const double* z, double* dz)>;

  StiffIntegrator(int dimension, double absolute_tolerance, double relative_tolerance, Rhs rhs);
  ~StiffIntegrator();
  StiffIntegrator(const StiffIntegrator&) = delete;
  StiffIntegrator& operator=(const StiffIntegrator&) = delete;

  // The odeint dense-output interface, on std::vector states.
  void initialize(const State& z, double t, double dt);
  template <class Ignored>
  std::pair<double, double> do_step(Ignored&&) {
    return step();
  }
  std::pair<double, double> step();
  void calc_state(double t, State& out) const;
  State current_state() const;
  double current_time() const;
  double current_time_step() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace pulsewise::detail
