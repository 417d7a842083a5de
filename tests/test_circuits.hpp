// Circuits shared by several core suites. Invented test data (demo values), not references.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "pulsewise/pulsewise.hpp"

namespace pulsewise::test {

inline PwmModulator pwm(double frequency_hz, double duty, std::string name = "pwm") {
  PwmModulator m;
  m.name = std::move(name);
  m.frequency_hz = frequency_hz;
  m.duty_cycle = duty;
  return m;
}

// 12 V boost at 200 kHz, D = 0.3 into 60 ohm: K = 2L/(R T) = 0.0667 below
// Kcrit = D (1-D)^2 = 0.147, so DCM (Erickson & Maksimovic, Fundamentals of Power Electronics,
// 2nd ed., ch. 5). Devices 10 mOhm on, open off; ideal inductor and capacitor. The ratio does
// not depend on the output capacitance, which sets how fast the output settles.
inline Circuit dcm_boost(PwmModulator modulator = pwm(200e3, 0.3),
                         double output_capacitance_f = 47e-6,
                         Waveform input = Waveform::constant(12.0)) {
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", std::move(input))
      .add_inductor("L1", "in", "sw", 10e-6)
      .add_switch("S1", "sw", "0", "pwm", SwitchOptions{10e-3, kOpen})
      .add_diode("D1", "sw", "out", DiodeOptions{10e-3, 0.0, kOpen})
      .add_capacitor("C1", "out", "0", output_capacitance_f)
      .add_resistor("Rload", "out", "0", 60.0)
      .add_modulator(std::move(modulator));
  return c;
}

// Options of a run of `periods` recording `signals`, with out.v as the output.
inline SimulationOptions run_options(long periods, std::vector<std::string> signals) {
  SimulationOptions options;
  options.periods = periods;
  options.recorded_signals = std::move(signals);
  options.output_signal = "out.v";
  return options;
}

// One moving state: an RL charged through a switch, freewheeling through a diode with a 0.3 V
// drop (100 kHz, D = 0.4, L / R = 25 periods).
inline Circuit rl_chopper() {
  Circuit c("rl chopper");
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(10.0))
      .add_switch("S1", "in", "sw", "pwm", SwitchOptions{20e-3, kOpen})
      .add_diode("D1", "0", "sw", DiodeOptions{20e-3, 0.3, kOpen})
      .add_inductor("L1", "sw", "out", 500e-6)
      .add_resistor("R1", "out", "0", 2.0)
      .add_modulator(pwm(100e3, 0.4));
  return c;
}

// Four moving states: a SEPIC in DCM (12 V, 100 kHz, D = 0.35, 10 uH windings, 10 uF coupling,
// 47 uF output, 40 ohm), whose idle interval carries the coupled circulating current of the two
// inductors.
inline Circuit dcm_sepic() {
  Circuit c("sepic");
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(12.0))
      .add_inductor("L1", "in", "a", 10e-6)
      .add_switch("S1", "a", "0", "pwm", SwitchOptions{10e-3, kOpen})
      .add_capacitor("C1", "a", "b", 10e-6)
      .add_inductor("L2", "b", "0", 10e-6)
      .add_diode("D1", "b", "out", DiodeOptions{10e-3, 0.4, kOpen})
      .add_capacitor("C2", "out", "0", 47e-6)
      .add_resistor("Rload", "out", "0", 40.0)
      .add_modulator(pwm(100e3, 0.35));
  return c;
}

}  // namespace pulsewise::test
