// A boost converter for end-to-end recorder tests with the real engine: 12 V in, 100 kHz,
// D = 0.4, 47 uH, 22 uF, 20 ohm; continuous conduction (ideal output 12 / (1 - 0.4) = 20 V).
#pragma once

#include "pulsewise/circuit.hpp"

namespace pulsewise::testing {

inline constexpr double kBoostPeriodS = 10e-6;

inline Circuit boost_circuit() {
  Circuit c("recorder test boost");
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(12.0));
  c.add_inductor("L1", "in", "sw", 47e-6);
  c.add_switch("S1", "sw", "0", "pwm");
  c.add_diode("D1", "sw", "out");
  c.add_capacitor("C1", "out", "0", 22e-6);
  c.add_resistor("R1", "out", "0", 20.0);
  PwmModulator pwm;
  pwm.name = "pwm";
  pwm.frequency_hz = 1.0 / kBoostPeriodS;
  pwm.duty_cycle = 0.4;
  c.add_modulator(pwm);
  return c;
}

}  // namespace pulsewise::testing
