// Baseline A: what an engineer writes by hand. Classical fourth-order Runge-Kutta with a fixed
// step h = T / steps_per_period on the hand-written model of a case (cases.hpp). The step grid
// contains every gate edge (steps_per_period is a multiple of the case's edge grid), which is the
// most favourable choice for this baseline; diode turn-off and turn-on are seen only at step
// ends: after each step the diode margins are checked, a violated diode is flipped and a cutset
// current left over by a late turn-off is clamped to zero (cases.hpp, project()). The cycle
// average of the output is the trapezoidal rule on the step grid.
#pragma once

#include <array>
#include <vector>

#include "cases.hpp"

namespace pwbench {

struct FixedStepResult {
  double final_average = 0.0;  // output average over the last period
  long steps = 0;
  bool ok = true;  // false when the diode pattern could not be made consistent
};

template <template <class> class Case>
class Rk4Baseline {
 public:
  using Model = Case<double>;
  static constexpr int n = Model::kStates;
  using State = std::array<double, n>;

  explicit Rk4Baseline(int steps_per_period) : steps_(steps_per_period) {
    period_ = 1.0 / model_.frequency_hz;
    patterns_.resize(steps_);
    for (int j = 0; j < steps_; ++j) patterns_[j] = switch_pattern_at(model_, (j + 0.5) / steps_);
  }

  int steps_per_period() const { return steps_; }

  FixedStepResult run(long periods) const {
    FixedStepResult result;
    State x{};
    unsigned di = 0, sw = ~0u;
    const double h = period_ / steps_;
    for (long p = 0; p < periods; ++p) {
      double sum = 0.5 * x[Model::kOutput];
      for (int j = 0; j < steps_; ++j) {
        if (patterns_[j] != sw) {
          sw = patterns_[j];
          result.ok = result.ok && settle(model_, sw, di, x.data(), kTolerance);
        }
        step(sw, di, x, h);
        result.ok = result.ok && settle(model_, sw, di, x.data(), kTolerance);
        sum += x[Model::kOutput];
      }
      sum -= 0.5 * x[Model::kOutput];
      result.final_average = sum / steps_;
    }
    result.steps = periods * steps_;
    return result;
  }

 private:
  static constexpr double kTolerance = 1e-12;

  void step(unsigned sw, unsigned di, State& x, double h) const {
    State k1, k2, k3, k4, y;
    model_.derivative(sw, di, x.data(), k1.data());
    for (int i = 0; i < n; ++i) y[i] = x[i] + 0.5 * h * k1[i];
    model_.derivative(sw, di, y.data(), k2.data());
    for (int i = 0; i < n; ++i) y[i] = x[i] + 0.5 * h * k2[i];
    model_.derivative(sw, di, y.data(), k3.data());
    for (int i = 0; i < n; ++i) y[i] = x[i] + h * k3[i];
    model_.derivative(sw, di, y.data(), k4.data());
    for (int i = 0; i < n; ++i) x[i] += h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
  }

  Model model_;
  int steps_;
  double period_ = 0.0;
  std::vector<unsigned> patterns_;
};

}  // namespace pwbench
