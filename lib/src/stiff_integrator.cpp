// Built as C++17 (see stiff_integrator.hpp): Boost 1.74's uBLAS uses std::allocator members that
// C++20 removed. Deprecation warnings from those headers are silenced here only.
#include "detail/stiff_integrator.hpp"

#include <algorithm>
#include <cmath>

#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wdeprecated-declarations"
#include <boost/numeric/odeint.hpp>
#include <boost/numeric/odeint/stepper/rosenbrock4.hpp>
#include <boost/numeric/odeint/stepper/rosenbrock4_controller.hpp>
#include <boost/numeric/odeint/stepper/rosenbrock4_dense_output.hpp>
#pragma GCC diagnostic pop

namespace pulsewise::detail {

namespace odeint = boost::numeric::odeint;
using UblasVector = boost::numeric::ublas::vector<double>;
using UblasMatrix = boost::numeric::ublas::matrix<double>;
using Dense =
    odeint::rosenbrock4_dense_output<odeint::rosenbrock4_controller<odeint::rosenbrock4<double>>>;

struct StiffIntegrator::Impl {
  int n;
  Rhs rhs;
  Dense stepper;
  mutable UblasVector buffer;
  std::vector<double> base, f0, f1;

  Impl(int dimension, double atol, double rtol, Rhs f)
      : n(dimension),
        rhs(std::move(f)),
        stepper(odeint::rosenbrock4_controller<odeint::rosenbrock4<double>>(atol, rtol)),
        buffer(dimension),
        base(dimension),
        f0(dimension),
        f1(dimension) {}

  void system(const UblasVector& z, UblasVector& dz) { rhs(&z[0], &dz[0]); }

  // Forward differences, step scaled to each component.
  void jacobian(const UblasVector& z, UblasMatrix& jac, UblasVector& dfdt) {
    for (int k = 0; k < n; ++k) base[k] = z[k];
    rhs(base.data(), f0.data());
    for (int j = 0; j < n; ++j) {
      const double saved = base[j];
      const double step = 1e-7 * std::max(std::abs(saved), 1e-3);
      base[j] = saved + step;
      rhs(base.data(), f1.data());
      base[j] = saved;
      for (int i = 0; i < n; ++i) jac(i, j) = (f1[i] - f0[i]) / step;
    }
    for (int k = 0; k < n; ++k) dfdt[k] = 0.0;  // autonomous between events
  }
};

StiffIntegrator::StiffIntegrator(int dimension, double absolute_tolerance,
                                 double relative_tolerance, Rhs rhs)
    : impl_(std::make_unique<Impl>(dimension, absolute_tolerance, relative_tolerance,
                                   std::move(rhs))) {}

StiffIntegrator::~StiffIntegrator() = default;

void StiffIntegrator::initialize(const State& z, double t, double dt) {
  UblasVector v(impl_->n);
  for (int k = 0; k < impl_->n; ++k) v[k] = z[k];
  impl_->stepper.initialize(v, t, dt);
}

std::pair<double, double> StiffIntegrator::step() {
  Impl& m = *impl_;
  auto system = [&m](const UblasVector& z, UblasVector& dz, double) { m.system(z, dz); };
  auto jacobian = [&m](const UblasVector& z, UblasMatrix& jac, double, UblasVector& dfdt) {
    m.jacobian(z, jac, dfdt);
  };
  return m.stepper.do_step(std::make_pair(system, jacobian));
}

void StiffIntegrator::calc_state(double t, State& out) const {
  impl_->stepper.calc_state(t, impl_->buffer);
  for (int k = 0; k < impl_->n; ++k) out[k] = impl_->buffer[k];
}

StiffIntegrator::State StiffIntegrator::current_state() const {
  const UblasVector& v = impl_->stepper.current_state();
  return State(v.begin(), v.end());
}

double StiffIntegrator::current_time() const { return impl_->stepper.current_time(); }
double StiffIntegrator::current_time_step() const { return impl_->stepper.current_time_step(); }

}  // namespace pulsewise::detail
