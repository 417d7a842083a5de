#include "waveform_sampler.hpp"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>

namespace pulsewise::detail {

std::vector<RecordingWindow> normalize_windows(std::vector<RecordingWindow> windows) {
  constexpr double kInf = std::numeric_limits<double>::infinity();
  if (windows.empty()) return {RecordingWindow{-kInf, kInf}};
  std::sort(windows.begin(), windows.end(), [](const RecordingWindow& a, const RecordingWindow& b) {
    return a.start_s < b.start_s;
  });
  std::vector<RecordingWindow> merged;
  for (const RecordingWindow& window : windows) {
    if (!merged.empty() && window.start_s <= merged.back().end_s) {
      merged.back().end_s = std::max(merged.back().end_s, window.end_s);
    } else {
      merged.push_back(window);
    }
  }
  return merged;
}

WaveformSampler::WaveformSampler(std::vector<RecordingWindow> windows, double grid_origin_s,
                                 double grid_step_s, std::size_t signal_count)
    : windows_(normalize_windows(std::move(windows))),
      grid_origin_s_(grid_origin_s),
      grid_step_s_(grid_step_s),
      signal_count_(signal_count),
      scratch_(signal_count),
      magnitude_(signal_count, 0.0),
      last_values_(signal_count),
      pending_values_(signal_count) {}

void WaveformSampler::add_piece(const PieceView& piece, WaveformRows& out) {
  const double begin = piece.t_begin();
  const double end = piece.t_end();
  while (window_cursor_ < windows_.size() && windows_[window_cursor_].end_s < begin) {
    ++window_cursor_;
  }
  for (std::size_t w = window_cursor_; w < windows_.size() && windows_[w].start_s <= end; ++w) {
    add_interval(piece, std::max(begin, windows_[w].start_s), std::min(end, windows_[w].end_s),
                 out);
  }
}

void WaveformSampler::add_interval(const PieceView& piece, double begin_s, double end_s,
                                   WaveformRows& out) {
  emit_pending(out);
  piece.recorded_values_at(begin_s, scratch_);
  if (!same_as_last(begin_s, scratch_)) emit(begin_s, scratch_, out);
  if (!(end_s > begin_s)) return;

  if (grid_step_s_ > 0.0) {
    const double guard = kGridGuard * grid_step_s_;
    double k = std::ceil((begin_s - grid_origin_s_) / grid_step_s_);
    for (double t = grid_origin_s_ + k * grid_step_s_; t < end_s - guard;
         k += 1.0, t = grid_origin_s_ + k * grid_step_s_) {
      if (t <= begin_s + guard) continue;
      piece.recorded_values_at(t, scratch_);
      emit(t, scratch_, out);
    }
  }
  // The end value is held back: if the next piece continues it unchanged, one row suffices.
  piece.recorded_values_at(end_s, pending_values_);
  pending_time_s_ = end_s;
  has_pending_ = true;
}

void WaveformSampler::emit_pending(WaveformRows& out) {
  if (!has_pending_) return;
  has_pending_ = false;
  emit(pending_time_s_, pending_values_, out);
}

void WaveformSampler::emit(double t, const std::vector<double>& values, WaveformRows& out) {
  assert(values.size() == signal_count_);
  out.time_s.push_back(t);
  out.values.insert(out.values.end(), values.begin(), values.end());
  for (std::size_t k = 0; k < signal_count_; ++k) {
    magnitude_[k] = std::max(magnitude_[k], std::abs(values[k]));
  }
  last_values_ = values;
  last_time_s_ = t;
  has_last_ = true;
}

bool WaveformSampler::same_as_last(double t, const std::vector<double>& values) const {
  if (!has_last_ || t != last_time_s_) return false;
  for (std::size_t k = 0; k < signal_count_; ++k) {
    const double scale = std::max({magnitude_[k], std::abs(values[k]), std::abs(last_values_[k])});
    if (std::abs(values[k] - last_values_[k]) > kContinuityTolerance * scale) return false;
  }
  return true;
}

}  // namespace pulsewise::detail
