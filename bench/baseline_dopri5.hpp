// Baseline B: Boost.Odeint's runge_kutta_dopri5 with dense output (make_dense_output with
// absolute and relative tolerance 1e-9) on the hand-written model of a case (cases.hpp).
// The stepper is restarted at every gate edge and every diode event, since the right-hand side
// jumps there. After each step the diode margins are evaluated at its end; when one has fallen
// below zero, its crossing is found by bisection on the dense output (to 1e-15 of the period) and
// the integration restarts from the interpolated state at the crossing. The cycle average of the
// output is integrated as an extra state q' = v_out / T, so it is under the same error control.
#pragma once

#include <array>
#include <boost/numeric/odeint.hpp>
#include <cmath>
#include <vector>

#include "cases.hpp"

namespace pwbench {

struct AdaptiveResult {
  double final_average = 0.0;
  long steps = 0;
  long events = 0;
  bool ok = true;
};

template <template <class> class Case>
class Dopri5Baseline {
 public:
  using Model = Case<double>;
  static constexpr int n = Model::kStates;
  using State = std::array<double, n + 1>;  // the model's states and the output's integral

  explicit Dopri5Baseline(double abs_tolerance = 1e-9, double rel_tolerance = 1e-9)
      : abs_(abs_tolerance), rel_(rel_tolerance) {
    period_ = 1.0 / model_.frequency_hz;
    for (int k = 0; k < Model::kSwitches; ++k) {
      edges_.push_back(model_.gates[k].on);
      const double off = model_.gates[k].on + model_.gates[k].width;
      edges_.push_back(off - std::floor(off));
    }
    edges_.push_back(0.0);
    edges_.push_back(1.0);
    std::sort(edges_.begin(), edges_.end());
    edges_.erase(std::unique(edges_.begin(), edges_.end()), edges_.end());
  }

  AdaptiveResult run(long periods) const {
    namespace odeint = boost::numeric::odeint;
    auto stepper = odeint::make_dense_output(abs_, rel_, odeint::runge_kutta_dopri5<State>());
    AdaptiveResult result;
    State x{};
    unsigned di = 0;
    double dt = period_ * 1e-3;
    for (long p = 0; p < periods; ++p) {
      x[n] = 0.0;
      for (std::size_t e = 0; e + 1 < edges_.size(); ++e) {
        const double t_begin = (p + edges_[e]) * period_, t_end = (p + edges_[e + 1]) * period_;
        const unsigned sw = switch_pattern_at(model_, 0.5 * (edges_[e] + edges_[e + 1]));
        result.ok = result.ok && settle(model_, sw, di, x.data(), kTolerance);
        double t = t_begin;
        stepper.initialize(x, t, std::min(dt, t_end - t));
        while (t < t_end) {
          const auto system = [&](const State& y, State& dy, double) {
            model_.derivative(sw, di, y.data(), dy.data());
            dy[n] = y[Model::kOutput] / period_;
          };
          stepper.do_step(system);
          ++result.steps;
          dt = stepper.current_time_step();
          const double t_step = std::min(stepper.current_time(), t_end);
          const auto [t_event, which] = find_event(stepper, sw, di, t, t_step);
          stepper.calc_state(which >= 0 ? t_event : t_step, x);
          t = which >= 0 ? t_event : t_step;
          if (which < 0) continue;
          ++result.events;
          di ^= 1u << which;
          result.ok = result.ok && settle(model_, sw, di, x.data(), kTolerance);
          stepper.initialize(x, t, std::min(dt, t_end - t));
        }
      }
      result.final_average = x[n];
    }
    return result;
  }

 private:
  static constexpr double kTolerance = 1e-12;
  static constexpr double kEventThreshold = 1e-10;  // A or V below zero that counts as a crossing

  // Earliest diode crossing in (t0, t1] on the dense output, or {t1, -1}.
  template <class Stepper>
  std::pair<double, int> find_event(Stepper& stepper, unsigned sw, unsigned di, double t0,
                                    double t1) const {
    State y;
    stepper.calc_state(t1, y);
    double best = t1;
    int which = -1;
    for (int d = 0; d < Model::kDiodes; ++d) {
      if (model_.diode_margin(sw, di, d, y.data()) >= -kEventThreshold) continue;
      double lo = t0, hi = t1;
      for (int it = 0; it < 64 && hi - lo > 1e-15 * period_; ++it) {
        const double mid = 0.5 * (lo + hi);
        if (mid <= lo || mid >= hi) break;  // at the resolution of t
        stepper.calc_state(mid, y);
        (model_.diode_margin(sw, di, d, y.data()) < 0 ? hi : lo) = mid;
      }
      if (which < 0 || hi < best) {
        best = hi;
        which = d;
      }
    }
    return {best, which};
  }

  Model model_;
  double abs_, rel_;
  double period_ = 0.0;
  std::vector<double> edges_;
};

}  // namespace pwbench
