// Time functions for independent sources: constant, a step at a given time, or a piecewise-linear
// table. Between breakpoints every waveform is affine in time, which is what keeps the exact
// (matrix exponential) segment solver exact: the solver is told the value and slope at the start
// of each segment and the breakpoints become scheduled events.
#pragma once

#include <limits>
#include <utility>
#include <vector>

namespace pulsewise {

class Waveform {
 public:
  enum class Kind { kConstant, kStep, kPiecewiseLinear };

  // Default: constant zero.
  Waveform() = default;
  static Waveform constant(double value);
  // `before` for t < time_s, `after` for t >= time_s.
  static Waveform step(double time_s, double before, double after);
  // Linear interpolation through (time_s, value) points with strictly increasing times; the first
  // value holds before the first point and the last value after the last point.
  static Waveform piecewise_linear(std::vector<std::pair<double, double>> points);

  Kind kind() const { return kind_; }
  // Value just after t (right-continuous at a step).
  double value(double t) const;
  // Slope just after t (zero for constant and step waveforms).
  double slope(double t) const;
  // The first breakpoint strictly after t, or +infinity.
  double next_breakpoint_after(double t) const;
  // True when the waveform can have a non-zero slope somewhere (needs a ramp input).
  bool can_ramp() const { return kind_ == Kind::kPiecewiseLinear; }
  const std::vector<std::pair<double, double>>& points() const { return points_; }

 private:
  Kind kind_ = Kind::kConstant;
  // Constant: one point (0, value). Step: two points (t, before), (t, after).
  std::vector<std::pair<double, double>> points_{{0.0, 0.0}};
};

}  // namespace pulsewise
