// Time functions for independent sources: constant, a step at a given time, a piecewise-linear
// table, a sine, or a rectified sine. Between breakpoints every waveform is either affine in time
// or a sinusoid; both are outputs of small linear systems (a ramp: u' = r, r' = 0; a sinusoid:
// the harmonic oscillator u' = w r, r' = -w (u - offset)), which is what keeps the exact (matrix
// exponential) segment solver exact. The solver is told value and slope at the start of each
// segment; breakpoints (table corners, steps, the zero crossings of a rectified sine, where its
// slope changes sign) become scheduled events.
#pragma once

#include <limits>
#include <utility>
#include <vector>

namespace pulsewise {

class Waveform {
 public:
  enum class Kind { kConstant, kStep, kPiecewiseLinear, kSine, kRectifiedSine };

  // Default: constant zero.
  Waveform() = default;
  static Waveform constant(double value);
  // `before` for t < time_s, `after` for t >= time_s.
  static Waveform step(double time_s, double before, double after);
  // Linear interpolation through (time_s, value) points with strictly increasing times; the first
  // value holds before the first point and the last value after the last point.
  static Waveform piecewise_linear(std::vector<std::pair<double, double>> points);
  // offset + amplitude * sin(2 pi frequency_hz t + phase_rad).
  static Waveform sine(double offset, double amplitude, double frequency_hz, double phase_rad = 0);
  // offset + amplitude * |sin(2 pi frequency_hz t + phase_rad)| (a full-wave rectified line).
  static Waveform rectified_sine(double offset, double amplitude, double frequency_hz,
                                 double phase_rad = 0);

  Kind kind() const { return kind_; }
  // Value just after t (right-continuous at a step).
  double value(double t) const;
  // Slope just after t (zero for constant and step waveforms).
  double slope(double t) const;
  // The first breakpoint strictly after t, or +infinity.
  double next_breakpoint_after(double t) const;
  // True when the waveform can have a non-zero slope somewhere (needs a ramp input).
  bool can_ramp() const { return kind_ >= Kind::kPiecewiseLinear; }
  bool is_sinusoidal() const { return kind_ == Kind::kSine || kind_ == Kind::kRectifiedSine; }
  // Angular frequency of a sinusoidal waveform, rad/s (0 otherwise).
  double angular_frequency() const;
  // Offset of a sinusoidal waveform (the centre the oscillator turns around).
  double offset() const { return offset_; }
  double amplitude() const { return amplitude_; }
  double frequency_hz() const { return frequency_hz_; }
  double phase_rad() const { return phase_rad_; }
  // Largest |value| the waveform takes.
  double peak_magnitude() const;
  const std::vector<std::pair<double, double>>& points() const { return points_; }

 private:
  Kind kind_ = Kind::kConstant;
  // Constant: one point (0, value). Step: two points (t, before), (t, after).
  std::vector<std::pair<double, double>> points_{{0.0, 0.0}};
  double offset_ = 0.0, amplitude_ = 0.0, frequency_hz_ = 0.0, phase_rad_ = 0.0;
};

}  // namespace pulsewise
