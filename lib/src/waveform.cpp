#include "pulsewise/waveform.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace pulsewise {

Waveform Waveform::constant(double value) {
  Waveform w;
  w.kind_ = Kind::kConstant;
  w.points_ = {{0.0, value}};
  return w;
}

Waveform Waveform::step(double time_s, double before, double after) {
  Waveform w;
  w.kind_ = Kind::kStep;
  w.points_ = {{time_s, before}, {time_s, after}};
  return w;
}

Waveform Waveform::piecewise_linear(std::vector<std::pair<double, double>> points) {
  Waveform w;
  w.kind_ = Kind::kPiecewiseLinear;
  w.points_ = std::move(points);
  if (w.points_.empty()) w.points_ = {{0.0, 0.0}};
  return w;
}

Waveform Waveform::sine(double offset, double amplitude, double frequency_hz, double phase_rad) {
  Waveform w;
  w.kind_ = Kind::kSine;
  w.offset_ = offset;
  w.amplitude_ = amplitude;
  w.frequency_hz_ = frequency_hz;
  w.phase_rad_ = phase_rad;
  w.points_ = {{0.0, offset + amplitude * std::sin(phase_rad)}};
  return w;
}

Waveform Waveform::rectified_sine(double offset, double amplitude, double frequency_hz,
                                  double phase_rad) {
  Waveform w = sine(offset, amplitude, frequency_hz, phase_rad);
  w.kind_ = Kind::kRectifiedSine;
  w.points_ = {{0.0, offset + amplitude * std::abs(std::sin(phase_rad))}};
  return w;
}

double Waveform::angular_frequency() const {
  return is_sinusoidal() ? 2 * std::numbers::pi * frequency_hz_ : 0.0;
}

double Waveform::peak_magnitude() const {
  if (is_sinusoidal()) return std::abs(offset_) + std::abs(amplitude_);
  double peak = 0.0;
  for (const auto& p : points_) peak = std::max(peak, std::abs(p.second));
  return peak;
}

namespace {

// Sign of sin(angle) just after the angle (right-continuous at zero crossings).
double sign_just_after(double angle) {
  const double turns = angle / std::numbers::pi;
  const double k = std::floor(turns + 1e-12);
  return std::fmod(std::abs(k), 2.0) < 0.5 ? 1.0 : -1.0;
}

// Index of the last point with time <= t (right-continuous), or -1 before the first point.
int segment_index(const std::vector<std::pair<double, double>>& p, double t) {
  auto it = std::upper_bound(p.begin(), p.end(), t,
                             [](double value, const auto& point) { return value < point.first; });
  return static_cast<int>(it - p.begin()) - 1;
}

}  // namespace

double Waveform::value(double t) const {
  const double angle = angular_frequency() * t + phase_rad_;
  switch (kind_) {
    case Kind::kSine: return offset_ + amplitude_ * std::sin(angle);
    case Kind::kRectifiedSine: return offset_ + amplitude_ * std::abs(std::sin(angle));
    case Kind::kConstant: return points_.front().second;
    case Kind::kStep: return t < points_.front().first ? points_[0].second : points_[1].second;
    case Kind::kPiecewiseLinear: {
      const int k = segment_index(points_, t);
      if (k < 0) return points_.front().second;
      if (k + 1 >= static_cast<int>(points_.size())) return points_.back().second;
      const auto& [t0, v0] = points_[k];
      const auto& [t1, v1] = points_[k + 1];
      return v0 + (v1 - v0) * (t - t0) / (t1 - t0);
    }
  }
  return 0.0;
}

double Waveform::slope(double t) const {
  const double w = angular_frequency();
  const double angle = w * t + phase_rad_;
  if (kind_ == Kind::kSine) return amplitude_ * w * std::cos(angle);
  if (kind_ == Kind::kRectifiedSine)
    return sign_just_after(angle) * amplitude_ * w * std::cos(angle);
  if (kind_ != Kind::kPiecewiseLinear) return 0.0;
  const int k = segment_index(points_, t);
  if (k < 0 || k + 1 >= static_cast<int>(points_.size())) return 0.0;
  const auto& [t0, v0] = points_[k];
  const auto& [t1, v1] = points_[k + 1];
  return (v1 - v0) / (t1 - t0);
}

double Waveform::next_breakpoint_after(double t) const {
  if (kind_ == Kind::kConstant || kind_ == Kind::kSine)
    return std::numeric_limits<double>::infinity();
  if (kind_ == Kind::kRectifiedSine) {
    // Zero crossings of sin(w t + phase): w t + phase = m pi.
    const double w = angular_frequency();
    if (!(w > 0)) return std::numeric_limits<double>::infinity();
    double m = std::floor((w * t + phase_rad_) / std::numbers::pi) + 1;
    double crossing = (m * std::numbers::pi - phase_rad_) / w;
    if (crossing <= t) crossing = ((m + 1) * std::numbers::pi - phase_rad_) / w;
    return crossing;
  }
  for (const auto& point : points_) {
    if (point.first > t) return point.first;
  }
  return std::numeric_limits<double>::infinity();
}

}  // namespace pulsewise
