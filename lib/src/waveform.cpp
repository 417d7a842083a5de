#include "pulsewise/waveform.hpp"

#include <algorithm>

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

namespace {

// Index of the last point with time <= t (right-continuous), or -1 before the first point.
int segment_index(const std::vector<std::pair<double, double>>& p, double t) {
  auto it = std::upper_bound(p.begin(), p.end(), t,
                             [](double value, const auto& point) { return value < point.first; });
  return static_cast<int>(it - p.begin()) - 1;
}

}  // namespace

double Waveform::value(double t) const {
  switch (kind_) {
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
  if (kind_ != Kind::kPiecewiseLinear) return 0.0;
  const int k = segment_index(points_, t);
  if (k < 0 || k + 1 >= static_cast<int>(points_.size())) return 0.0;
  const auto& [t0, v0] = points_[k];
  const auto& [t1, v1] = points_[k + 1];
  return (v1 - v0) / (t1 - t0);
}

double Waveform::next_breakpoint_after(double t) const {
  if (kind_ == Kind::kConstant) return std::numeric_limits<double>::infinity();
  for (const auto& point : points_) {
    if (point.first > t) return point.first;
  }
  return std::numeric_limits<double>::infinity();
}

}  // namespace pulsewise
