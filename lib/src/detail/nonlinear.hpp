// Element laws of the nonlinear elements (ODE path): the saturating inductor's flux-linkage curve
// and the constant-power load's current. See circuit.hpp for the models and docs/method.md.
#pragma once

#include <cmath>

namespace pulsewise::detail {

// psi(i) = Ls i + (L0 - Ls) Is tanh(i / Is).
struct SaturationCurve {
  double l0 = 0, ls = 0, is = 0;

  double differential_inductance(double i) const {
    const double c = std::cosh(i / is);
    return ls + (l0 - ls) / (c * c);
  }
  double flux_linkage(double i) const { return ls * i + (l0 - ls) * is * std::tanh(i / is); }
  // Magnetic energy integral of i dpsi from 0: Ls i^2 / 2 + (L0 - Ls) Is^2 (x tanh x - ln cosh x).
  double stored_energy(double i) const {
    const double x = i / is;
    const double log_cosh = std::abs(x) + std::log1p(std::exp(-2 * std::abs(x))) - std::log(2.0);
    return 0.5 * ls * i * i + (l0 - ls) * is * is * (x * std::tanh(x) - log_cosh);
  }
  // Inverse of psi by Newton's method; psi is strictly increasing, so it converges from i = psi/L0.
  double current_for(double psi) const {
    double i = psi / l0;
    for (int k = 0; k < 100; ++k) {
      const double step = (flux_linkage(i) - psi) / differential_inductance(i);
      i -= step;
      if (std::abs(step) <= 1e-16 * std::max(std::abs(i), is)) break;
    }
    return i;
  }
};

// i = P / v at or above the cut-in voltage, the resistor vc^2 / P below (continuous at vc).
struct ConstantPowerLaw {
  double power = 0, cut_in = 1;
  double current(double v) const { return v >= cut_in ? power / v : power * v / (cut_in * cut_in); }
  double slope(double v) const {
    return v >= cut_in ? -power / (v * v) : power / (cut_in * cut_in);
  }
};

}  // namespace pulsewise::detail
