// Worked example (docs/worked-example.md): a boost converter built in C++ code, run for 500
// switching periods from rest; prints the per-cycle average output voltage and conduction mode.
#include <cstdio>

#include "pulsewise/pulsewise.hpp"

namespace {

// Prints every 25th period and the last one.
class CyclePrinter : public pulsewise::Observer {
 public:
  explicit CyclePrinter(int output_index) : output_index_(output_index) {}
  void on_cycle(const pulsewise::CycleMetrics& cycle) override {
    if (cycle.index % 25 != 0 && cycle.index != 499) return;
    std::printf("%5ld  %10.5f  %-8s", cycle.index, cycle.signals[output_index_].average,
                pulsewise::to_string(cycle.mode));
    for (const auto& interval : cycle.intervals) std::printf("  %.4f", interval.fraction);
    std::printf("\n");
  }

 private:
  int output_index_;
};

}  // namespace

int main() {
  using namespace pulsewise;
  // A 12 V to ~21 V boost at light load (it runs in DCM), switching at 200 kHz.
  PwmModulator pwm;
  pwm.name = "pwm";
  pwm.frequency_hz = 200e3;
  pwm.duty_cycle = 0.3;
  Circuit boost("worked-example boost");
  boost.add_voltage_source("Vin", "in", "0", Waveform::constant(12.0))
      .add_inductor("L1", "in", "sw", 10e-6)
      .add_switch("S1", "sw", "0", "pwm", SwitchOptions{.on_resistance_ohm = 10e-3})
      .add_diode("D1", "sw", "out", DiodeOptions{.on_resistance_ohm = 10e-3})
      .add_capacitor("C1", "out", "0", 47e-6)
      .add_resistor("Rload", "out", "0", 60.0)
      .add_modulator(pwm);

  SimulationOptions options;
  options.periods = 500;
  options.recorded_signals = {"out.v", "L1.i"};
  options.output_signal = "out.v";
  try {
    Simulation simulation(boost, options);
    CyclePrinter printer(0);
    std::printf("period  out.v avg (V)  mode      interval fractions (D1 D2 D3)\n");
    const RunSummary summary = simulation.run(&printer);
    std::printf("\n%s", summary.brief_report().c_str());
    return summary.ok() ? 0 : 3;
  } catch (const InputError& error) {
    std::fprintf(stderr, "%s\n", error.what());
    return 2;
  }
}
