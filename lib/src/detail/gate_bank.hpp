// The gate signals of all modulators of a circuit, evaluated as exact functions of time: the
// state of every gate just after t and the next edge after t. The event engine treats every
// edge as a scheduled event.
#pragma once

#include <limits>
#include <string>
#include <vector>

#include "pulsewise/circuit.hpp"
#include "pulsewise/configuration_model.hpp"

namespace pulsewise::detail {

// The run period that contains time t_s (times before 0 count as period 0).
long run_period_of(double t_s, double run_period_s);

// The margin rule of a stretch of quiet periods, for gate schedule changes and source
// breakpoints alike: `change_periods` (sorted) holds the run period of every change. Period k is
// quiet when no change falls in periods k - 1 to k + 1; its stretch then ends two periods before
// the next change. Returns that last period, -1 when k is not quiet, or kForever.
inline constexpr long kForever = std::numeric_limits<long>::max();
long quiet_stretch_end(const std::vector<long>& change_periods, long period_index);

class GateBank {
 public:
  // time_resolution_s: edges closer than this to t count as already passed at t.
  // run_period_s: the period of the cycle loop (next_edge_in_period()); 0 when there is none.
  GateBank(const Circuit& circuit, const std::vector<int>& devices, double time_resolution_s,
           double run_period_s = 0.0);

  // Bits of the switches that are on just after t (diode bits are zero).
  DevicePattern switch_pattern(double t) const;
  // The first gate edge strictly after t (+ resolution), or +infinity.
  double next_edge_after(double t) const;
  // The same for t = origin + tau, returned relative to origin. Edges are computed in long
  // double, so that the stretch from tau to the edge keeps the precision of tau rather than of
  // the absolute time (late in a long run the spacing of doubles at t exceeds 1e-12 T).
  double next_edge_after(long double origin, double tau) const;
  // next_edge_after(origin, tau) inside run period `period_index` of length period_s. Over a
  // stretch of quiet periods (quiet_until()) the edge offsets of its first period are found once
  // and reused: the same offsets, without the long-double search.
  double next_edge_in_period(long period_index, long double origin, double tau) const;
  // switch_pattern(origin + tau) inside run period `period_index`. Where the edge offsets are
  // reused (next_edge_in_period()), the pattern just after each of them and at the period's
  // start is found once with them: at those offsets no gate is evaluated again.
  DevicePattern switch_pattern_in_period(long period_index, long double origin, double tau) const;
  // The last run period of the stretch of quiet periods that `period_index` begins, in which
  // every period has the gate edges of the one before at the same offsets: every switch gate
  // repeats with the run period, its duty ramp has ended, and no schedule changes in the period
  // or in the periods next to it (one period of margin on each side). -1 when `period_index` is
  // not quiet; kForever when the stretch never ends.
  long quiet_until(long period_index) const;
  // Mask of the switch bits in a DevicePattern.
  DevicePattern switch_mask() const { return switch_mask_; }

 private:
  enum class Kind { kPwm, kHigh, kLow, kSchedule };
  struct Gate {
    std::string name;
    Kind kind = Kind::kPwm;
    double period_s = 0, duty = 0, phase = 0, dead_time_s = 0;
    SoftStart soft_start;
    const GateSchedule* schedule = nullptr;
  };
  bool on(const Gate& g, double t) const;
  long double next_edge(const Gate& g, long double t) const;
  double duty_of_period(const Gate& g, long k) const;
  double just_after(double t) const;

  std::vector<Gate> gates_;
  std::vector<std::pair<int, int>> switch_gate_;  // (device bit, gate index)
  DevicePattern switch_mask_ = 0;
  double resolution_s_;
  // periodic_from_: the first run period after every duty ramp (-1: never, a gate runs at
  // another period). change_periods_: the run period of every schedule change, sorted.
  double run_period_s_ = 0.0;
  long periodic_from_ = -1;
  std::vector<long> change_periods_;
  // The reused offsets of next_edge_in_period(), valid for the run periods from offsets_begin_
  // to offsets_end_ (a stretch of quiet periods).
  mutable long offsets_begin_ = 0, offsets_end_ = -1;
  mutable std::vector<double> periodic_offsets_;
  mutable std::vector<DevicePattern> periodic_patterns_;  // just after each offset
  mutable DevicePattern periodic_start_pattern_ = 0;      // just after a period's start
  bool offsets_hold(long period_index) const {
    return period_index >= offsets_begin_ && period_index <= offsets_end_;
  }
  // Makes the reused offsets those of run period `period_index`; false when it is not quiet.
  bool find_periodic_offsets(long period_index, long double origin) const;
};

}  // namespace pulsewise::detail
