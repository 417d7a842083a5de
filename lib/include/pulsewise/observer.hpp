// The observer interface through which the cycle loop reports what it computes: every piece of
// trajectory (a stretch of time with one configuration, short enough to be evaluated anywhere
// inside exactly), every device event, every finished switching period, and the end of the run.
// Recorders (traces to HDF5, CSV, a plot) are observers; the engine knows nothing of files.
#pragma once

#include <cstddef>
#include <span>
#include <string>
#include <vector>

#include "pulsewise/configuration_model.hpp"

namespace pulsewise {

struct CycleMetrics;
struct RunSummary;

// What a run will produce, given to the observer before the first piece.
struct RunInfo {
  std::vector<SignalInfo> recorded;  // the recorded signals, in the order of every value array
  double switching_period_s = 0.0;
  double start_time_s = 0.0;
  double end_time_s = 0.0;
  long periods = 0;  // periods the run is asked for (it may stop earlier)
};

// A piece of the trajectory: [t_begin, t_end] with one configuration. Values of the recorded
// signals can be evaluated exactly at any time inside (polynomial to machine precision).
class PieceView {
 public:
  virtual ~PieceView() = default;
  virtual double t_begin() const = 0;
  virtual double t_end() const = 0;
  virtual DevicePattern pattern() const = 0;
  // Recorded signal values at t in [t_begin, t_end]; out.size() == RunInfo::recorded.size().
  virtual void recorded_values_at(double t, std::span<double> out) const = 0;
};

enum class EventKind {
  kGateEdge,          // a modulator turned a switch on or off
  kSourceBreakpoint,  // a source waveform changed value or slope
  kDeviceTurnOn,      // a diode became forward-biased
  kDeviceTurnOff,     // a diode current fell to zero (natural turn-off)
  kForcedTurnOff,     // a diode was turned off by the consistency search (forced commutation)
  kForcedTurnOn,      // a diode was turned on by the consistency search (freewheeling)
};

const char* to_string(EventKind kind);

struct EventRecord {
  double time_s = 0.0;
  EventKind kind = EventKind::kGateEdge;
  int element = -1;  // the device (or source) concerned, -1 when none
  std::string element_name;
  DevicePattern pattern_after = 0;
};

class Observer {
 public:
  virtual ~Observer() = default;
  virtual void on_start(const RunInfo& /*info*/) {}
  virtual void on_piece(const PieceView& /*piece*/) {}
  virtual void on_event(const EventRecord& /*event*/) {}
  virtual void on_cycle(const CycleMetrics& /*cycle*/) {}
  virtual void on_finish(const RunSummary& /*summary*/) {}
  // False for an observer that needs only the per-period metrics (a progress display, a
  // convergence monitor): it then receives no on_piece and no on_event, and the engine may
  // replay and repeat periods (SimulationOptions::replay_repeating_periods and
  // repeat_recurring_periods), which an observer of every piece rules out.
  virtual bool wants_pieces_and_events() const { return true; }
};

}  // namespace pulsewise
