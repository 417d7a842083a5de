// Turns the stream of trajectory pieces into waveform rows: inside the recording windows, one row
// at the start and end of every piece (two rows at one instant where a signal jumps, one where it
// is continuous) plus the points of a uniform grid anchored at the run start.
#pragma once

#include <cstddef>
#include <vector>

#include "pulsewise/observer.hpp"
#include "pulsewise/recording.hpp"

namespace pulsewise::detail {

// Rows not yet written to the file.
struct WaveformRows {
  std::vector<double> time_s;
  std::vector<double> values;  // row-major, signal_count per row
  std::size_t rows() const { return time_s.size(); }
  void clear() {
    time_s.clear();
    values.clear();
  }
};

// Sorted, non-overlapping windows; the whole time axis when `windows` is empty.
std::vector<RecordingWindow> normalize_windows(std::vector<RecordingWindow> windows);

class WaveformSampler {
 public:
  // Two values at one instant closer than this (relative to the signal's running magnitude)
  // count as continuous. The engine evaluates a continuous signal at a piece boundary from two
  // polynomials that agree to a few ulps; a real jump (a switch current) is many orders larger.
  static constexpr double kContinuityTolerance = 1e-10;
  // Grid points this close to a piece boundary (as a fraction of the grid step) are left out:
  // the boundary row already stands there.
  static constexpr double kGridGuard = 1e-9;

  WaveformSampler() = default;
  WaveformSampler(std::vector<RecordingWindow> windows, double grid_origin_s, double grid_step_s,
                  std::size_t signal_count);

  // Pieces arrive in time order.
  void add_piece(const PieceView& piece, WaveformRows& out);
  // Emits the row held back at the end of the last piece (the value just before its end).
  void emit_pending(WaveformRows& out);

 private:
  void add_interval(const PieceView& piece, double begin_s, double end_s, WaveformRows& out);
  void emit(double t, const std::vector<double>& values, WaveformRows& out);
  bool same_as_last(double t, const std::vector<double>& values) const;

  std::vector<RecordingWindow> windows_;
  std::size_t window_cursor_ = 0;
  double grid_origin_s_ = 0.0;
  double grid_step_s_ = 0.0;
  std::size_t signal_count_ = 0;
  std::vector<double> scratch_;
  std::vector<double> magnitude_;  // running max |value| per signal
  bool has_last_ = false;
  double last_time_s_ = 0.0;
  std::vector<double> last_values_;
  bool has_pending_ = false;
  double pending_time_s_ = 0.0;
  std::vector<double> pending_values_;
};

}  // namespace pulsewise::detail
