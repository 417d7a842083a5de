// The fixed-size piece kernel (lib/src/piece_kernel.cpp) against the general piece code it
// replaces for small moving blocks. The kernel promises the same operations in the same order,
// so every figure of a run must be identical to the bit with it on or off, whatever the block
// size (1 to 4 moving states), with or without energy accounting (Gram matrix or per-signal
// polynomials for the RMS) and with an observer of pieces (polynomial coefficients). The other
// suites check the results themselves against published values with the kernel on (the
// default).
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "pulsewise/pulsewise.hpp"
#include "test_circuits.hpp"

namespace pulsewise {
namespace {

// Every period's metrics and, when it takes pieces, each piece's recorded values at its two ends
// and its middle.
class Collector final : public Observer {
 public:
  explicit Collector(bool pieces) : pieces_(pieces) {}
  bool wants_pieces_and_events() const override { return pieces_; }
  void on_cycle(const CycleMetrics& cycle) override { cycles.push_back(cycle); }
  void on_piece(const PieceView& piece) override {
    std::vector<double> values(signals);
    const double t0 = piece.t_begin(), t1 = piece.t_end();
    for (const double t : {t0, 0.5 * (t0 + t1), t1}) {
      piece.recorded_values_at(t, values);
      samples.insert(samples.end(), values.begin(), values.end());
    }
  }
  std::size_t signals = 0;
  std::vector<CycleMetrics> cycles;
  std::vector<double> samples;

 private:
  bool pieces_;
};

struct RunRecord {
  RunSummary summary;
  Collector collector;
};

RunRecord run(const Circuit& circuit, SimulationOptions options, bool kernel, bool pieces) {
  options.small_block_kernel = kernel;
  // Every period computed piece by piece (a replayed or repeated period has no pieces).
  options.repeat_recurring_periods = false;
  options.replay_repeating_periods = false;
  // Every piece computed by its series (pieces met again would come from their operators).
  options.reuse_piece_operators = false;
  RunRecord r{RunSummary{}, Collector(pieces)};
  r.collector.signals = options.recorded_signals.size();
  Simulation simulation(circuit, options);
  r.summary = simulation.run(&r.collector);
  return r;
}

void expect_identical_cycles(const CycleMetrics& a, const CycleMetrics& b) {
  ASSERT_EQ(a.signals.size(), b.signals.size());
  for (std::size_t j = 0; j < a.signals.size(); ++j) {
    EXPECT_EQ(a.signals[j].average, b.signals[j].average) << "signal " << j;
    EXPECT_EQ(a.signals[j].rms, b.signals[j].rms) << "signal " << j;
    EXPECT_EQ(a.signals[j].min, b.signals[j].min) << "signal " << j;
    EXPECT_EQ(a.signals[j].max, b.signals[j].max) << "signal " << j;
  }
  ASSERT_EQ(a.intervals.size(), b.intervals.size());
  for (std::size_t i = 0; i < a.intervals.size(); ++i) {
    EXPECT_EQ(a.intervals[i].pattern, b.intervals[i].pattern);
    EXPECT_EQ(a.intervals[i].fraction, b.intervals[i].fraction);
  }
  EXPECT_EQ(a.mode, b.mode);
  EXPECT_EQ(a.energy_in_j, b.energy_in_j);
  EXPECT_EQ(a.dissipated_j, b.dissipated_j);
  ASSERT_EQ(a.element_energy.size(), b.element_energy.size());
  for (std::size_t k = 0; k < a.element_energy.size(); ++k)
    EXPECT_EQ(a.element_energy[k].energy_j, b.element_energy[k].energy_j);
}

// Runs with the kernel on and off; expects every figure identical and, so that the comparison
// is not vacuous, that the kernel computed every piece of the run with it on.
void expect_kernel_identical(const Circuit& circuit, const SimulationOptions& options,
                             bool pieces) {
  const RunRecord with = run(circuit, options, true, pieces);
  const RunRecord without = run(circuit, options, false, pieces);
  ASSERT_TRUE(with.summary.ok()) << with.summary.message;
  ASSERT_TRUE(without.summary.ok()) << without.summary.message;
  EXPECT_EQ(without.summary.kernel_pieces, 0);
  // Runs may stop at their steady state; at least two pieces per period.
  EXPECT_GE(with.summary.cycles, 20);
  EXPECT_GE(with.summary.kernel_pieces, 2 * with.summary.cycles);
  EXPECT_EQ(with.summary.cycles, without.summary.cycles);
  EXPECT_EQ(with.summary.events, without.summary.events);
  EXPECT_EQ(with.summary.final_state, without.summary.final_state);
  EXPECT_EQ(with.summary.startup.peak_inductor_current_a,
            without.summary.startup.peak_inductor_current_a);
  EXPECT_EQ(with.summary.startup.output_peak, without.summary.startup.output_peak);
  ASSERT_EQ(with.collector.cycles.size(), without.collector.cycles.size());
  for (std::size_t k = 0; k < with.collector.cycles.size(); ++k) {
    SCOPED_TRACE("period " + std::to_string(k));
    expect_identical_cycles(with.collector.cycles[k], without.collector.cycles[k]);
    if (::testing::Test::HasFailure()) return;
  }
  EXPECT_EQ(with.collector.samples, without.collector.samples);
  if (pieces) {
    EXPECT_FALSE(with.collector.samples.empty());
  }
}

// Two moving states; the start-up from rest passes through CCM into DCM (test::dcm_boost).
TEST(PieceKernel, DcmBoostRunIsIdenticalToTheGeneralCode) {
  expect_kernel_identical(test::dcm_boost(), test::run_options(1500, {"out.v", "L1.i", "sw.v"}),
                          false);
}

// Without energy accounting and with fewer signals than entries of z the RMS comes from each
// signal's polynomial instead of the Gram matrix.
TEST(PieceKernel, RmsFromSignalPolynomialsIsIdenticalToTheGeneralCode) {
  SimulationOptions options = test::run_options(800, {"out.v"});
  options.energy_accounting = false;
  expect_kernel_identical(test::dcm_boost(), options, false);
}

// An observer of pieces receives the kernel's polynomial coefficients.
TEST(PieceKernel, PiecesSeenByAnObserverAreIdenticalToTheGeneralCode) {
  expect_kernel_identical(test::dcm_boost(), test::run_options(300, {"out.v", "L1.i"}), true);
}

// One moving state (test::rl_chopper).
TEST(PieceKernel, OneMovingStateIsIdenticalToTheGeneralCode) {
  expect_kernel_identical(test::rl_chopper(), test::run_options(500, {"out.v", "L1.i"}), false);
}

// Four moving states: a SEPIC in DCM (test::dcm_sepic), whose idle interval carries the coupled
// circulating current of the two inductors.
TEST(PieceKernel, FourMovingStatesAreIdenticalToTheGeneralCode) {
  expect_kernel_identical(test::dcm_sepic(),
                          test::run_options(600, {"out.v", "L1.i", "L2.i", "a.v"}), false);
}

// Past the kernel's size (more than 4 moving states) the general code computes every piece: a
// synchronous buck (body diodes across both switches, 100 ns dead times) with an input filter
// and a second output stage (invented demo values: 24 V, 200 kHz, D = 0.25, six states) runs
// with no kernel piece.
TEST(PieceKernel, ConfigurationsWithMoreThanFourMovingStatesUseTheGeneralCode) {
  const SwitchOptions sw{.on_resistance_ohm = 10e-3};
  const DiodeOptions body{.on_resistance_ohm = 10e-3, .forward_voltage_v = 0.7};
  ComplementaryPwm bridge;
  bridge.name = "hb";
  bridge.frequency_hz = 200e3;
  bridge.duty_cycle = 0.25;
  bridge.dead_time_s = 100e-9;
  Circuit c("filtered synchronous buck");
  c.add_voltage_source("Vin", "src", "0", Waveform::constant(24.0))
      .add_inductor("Lf", "src", "in", 2e-6)
      .add_capacitor("Cf", "in", "0", 10e-6)
      .add_switch("Shigh", "in", "sw", "hb.high", sw)
      .add_diode("Dhigh", "sw", "in", body)
      .add_switch("Slow", "sw", "0", "hb.low", sw)
      .add_diode("Dlow", "0", "sw", body)
      .add_modulator(bridge)
      .add_inductor("L1", "sw", "mid", 22e-6)
      .add_capacitor("C1", "mid", "0", 22e-6)
      .add_inductor("L2", "mid", "out", 1e-6)
      .add_capacitor("C2", "out", "0", 47e-6)
      .add_resistor("Rload", "out", "0", 3.0);
  const RunRecord with = run(c, test::run_options(200, {"out.v", "L1.i"}), true, false);
  ASSERT_TRUE(with.summary.ok()) << with.summary.message;
  EXPECT_EQ(with.summary.cycles, 200);
  EXPECT_EQ(with.summary.kernel_pieces, 0);
}

}  // namespace
}  // namespace pulsewise
