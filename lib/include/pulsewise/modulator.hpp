// Gate drivers: they decide when each controlled switch is on. A switch names the gate signal it
// follows. Every modulator provides one or two named gate signals:
//   PwmModulator         -> gate "<name>"
//   ComplementaryPwm     -> gates "<name>.high" and "<name>.low" (with dead time between them)
//   GateSchedule         -> gate "<name>" (on/off at listed times: a load step, a fault, ...)
// All edges are scheduled events of the event engine, located exactly.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "pulsewise/error.hpp"

namespace pulsewise {

// Linear duty ramp for soft start: duty goes from initial_duty in period 0 to the modulator's
// duty_cycle in period `periods` and stays there. periods == 0 means no ramp.
struct SoftStart {
  double initial_duty = 0.0;  // duty in the first period, 0..1
  long periods = 0;           // length of the ramp in switching periods
};

// Fixed-frequency trailing-edge PWM: period k starts at (k + phase) * T with the gate on, and the
// gate goes off after duty * T.
struct PwmModulator {
  std::string name;
  double frequency_hz = 0.0;  // switching frequency, Hz, > 0
  double duty_cycle = 0.0;    // on-time fraction, 0..1
  double phase = 0.0;         // delay of the period start as a fraction of the period, 0..1
  SoftStart soft_start;
  SourceLocation where;
};

// Complementary pair for a synchronous half bridge: "<name>.high" is on for duty * T from the
// period start; "<name>.low" is on from dead_time_s after the high gate turns off until
// dead_time_s before the next period starts. Both are off during the dead times.
struct ComplementaryPwm {
  std::string name;
  double frequency_hz = 0.0;  // Hz, > 0
  double duty_cycle = 0.0;    // high-side on fraction, 0..1
  double phase = 0.0;         // fraction of the period, 0..1
  double dead_time_s = 0.0;   // each of the two dead times, s, >= 0
  SoftStart soft_start;
  SourceLocation where;
};

// An explicit on/off schedule (load steps, enable pins). The gate is `initial_on` before the
// first listed time and takes each listed state from its time on.
struct GateSchedule {
  std::string name;
  bool initial_on = false;
  std::vector<std::pair<double, bool>> changes;  // (time_s, on) with strictly increasing times
  SourceLocation where;
};

}  // namespace pulsewise
