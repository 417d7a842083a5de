// Consumer of the installed package: builds an ideal buck converter with the C++ API, runs it to
// steady state and checks the average output against the CCM conversion ratio M = D
// (Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed., ch. 2, eq. 2.3).
// With the optional components it also parses a circuit text (circuit_file) and writes and reads
// back a trace file (hdf5), so that every installed library is linked and called once.
// Exit 0 when all agree, 1 otherwise.
#include <cmath>
#include <cstdio>
#include <exception>

#include "pulsewise/pulsewise.hpp"
#ifdef CONSUMER_HAS_CIRCUIT_FILE
#include "pulsewise/circuit_file.hpp"
#endif
#ifdef CONSUMER_HAS_HDF5
#include "pulsewise/hdf5_recorder.hpp"
#include "pulsewise/trace_file.hpp"
#endif

namespace {

// The loader turns "10 uH" into 1e-5 H (SI prefix u = 1e-6: BIPM SI Brochure, 9th ed., Table 7).
bool circuit_file_works() {
#ifdef CONSUMER_HAS_CIRCUIT_FILE
  const char* text =
      "[[voltage_source]]\nname = \"V1\"\nnodes = [\"a\", \"0\"]\nvoltage = \"1 V\"\n"
      "[[resistor]]\nname = \"R1\"\nnodes = [\"a\", \"b\"]\nresistance = \"1 kOhm\"\n"
      "[[inductor]]\nname = \"L1\"\nnodes = [\"b\", \"0\"]\ninductance = \"10 uH\"\n"
      "[run]\nperiods = 1\nswitching_period = \"1 us\"\n";
  const pulsewise::CircuitFile file = pulsewise::parse_circuit_text(text, "consumer.toml");
  const int l1 = file.circuit.find_element("L1");
  if (l1 < 0 || std::abs(file.circuit.elements()[l1].value - 1e-5) > 1e-20) {
    std::printf("circuit_file: L1 not read as 10 uH\n");
    return false;
  }
  std::printf("circuit_file: ok\n");
#endif
  return true;
}

// A trace written by the recorder reads back with as many cycle rows as periods were run.
bool hdf5_works(const pulsewise::Circuit& circuit, pulsewise::SimulationOptions options) {
#ifdef CONSUMER_HAS_HDF5
  options.periods = 10;
  options.stop_at_steady_state = false;
  const std::string path = "consumer-trace.h5";
  {
    pulsewise::Hdf5Recorder recorder(path, pulsewise::RecordingOptions{});
    pulsewise::Simulation simulation(circuit, options);
    simulation.run(&recorder);
    recorder.close();
  }
  const pulsewise::TraceInfo info = pulsewise::read_trace_info(path);
  if (info.cycle_rows != 10 || !info.complete) {
    std::printf("hdf5: expected 10 complete cycle rows, found %ld\n", info.cycle_rows);
    return false;
  }
  std::printf("hdf5: ok\n");
#else
  (void)circuit;
  (void)options;
#endif
  return true;
}

}  // namespace

int main() {
  constexpr double kInputV = 12.0;
  constexpr double kDuty = 0.4;
  constexpr double kFrequencyHz = 100e3;
  // L = 100 uH, R = 5 ohm: K = 2L/(R Ts) = 4, far above Kcrit = 1 - D = 0.6, so CCM.
  // C = 100 uF: output ripple dVpp/V = (1-D) Ts^2 / (8 L C) = 7.5e-4 (same book, ch. 2).
  pulsewise::Circuit buck("consumer buck");
  buck.add_voltage_source("Vin", "in", "0", pulsewise::Waveform::constant(kInputV))
      // 1 mOhm on-resistances: ideal devices up to a 2e-4 relative drop at 5 ohm load.
      .add_switch("S1", "in", "sw", "pwm", {.on_resistance_ohm = 1e-3})
      .add_diode("D1", "0", "sw", {.on_resistance_ohm = 1e-3})
      .add_inductor("L1", "sw", "out", 100e-6)
      .add_capacitor("C1", "out", "0", 100e-6)
      .add_resistor("R1", "out", "0", 5.0)
      .add_modulator(pulsewise::PwmModulator{
          .name = "pwm", .frequency_hz = kFrequencyHz, .duty_cycle = kDuty});

  pulsewise::SimulationOptions options;
  options.periods = 20000;
  options.stop_at_steady_state = true;
  options.recorded_signals = {"out.v"};
  try {
    pulsewise::Simulation simulation(buck, options);
    const pulsewise::RunSummary summary = simulation.run();
    if (!summary.ok()) {
      std::printf("run ended abnormally: %s\n", summary.message.c_str());
      return 1;
    }
    const double m = summary.last_cycle.signals.at(0).average / kInputV;
    // Tolerance 0.2 %: covers the 2e-4 on-resistance drop and the ripple, leaves margin for
    // the residual start-up transient at the steady-state tolerance.
    const double error = std::abs(m - kDuty) / kDuty;
    std::printf("pulsewise %s consumer: buck M = %.6f, closed form %.6f, error %.2e\n",
                pulsewise::kVersion, m, kDuty, error);
    const bool components_ok = circuit_file_works() && hdf5_works(buck, options);
    return error < 2e-3 && components_ok ? 0 : 1;
  } catch (const std::exception& e) {
    std::printf("error: %s\n", e.what());
    return 1;
  }
}
