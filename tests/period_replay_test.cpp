// Replay of repeating periods (SimulationOptions::replay_repeating_periods) against the piece
// engine. The engine's requirement is invariance: results agree to 1e-12 whether the cached
// transition data are used or not. The piece engine itself is checked against published
// results elsewhere (closed_form_test.cpp, analytic_circuit_test.cpp); here every figure of a
// replayed run must equal the piece engine's to rounding. The circuits are invented demo data.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include "pulsewise/pulsewise.hpp"
#include "test_circuits.hpp"

namespace pulsewise {
namespace {

// 1e-12 of the quantity's scale: the invariance bound. Rounding differs between the
// two paths (operators built once against a series per piece), by about 1e-15 per period.
constexpr double kInvariance = 1e-12;

void expect_close(double a, double b, double scale, const std::string& what) {
  EXPECT_LE(std::abs(a - b), kInvariance * std::max({std::abs(a), std::abs(b), scale}))
      << what << ": replayed " << a << ", piece engine " << b;
}

RunSummary run(const Circuit& circuit, long periods, bool replay,
               SimulationOptions options = SimulationOptions{}) {
  options.periods = periods;
  options.output_signal = "out.v";
  options.replay_repeating_periods = replay;
  options.repeat_recurring_periods = replay;
  Simulation sim(circuit, options);
  return sim.run();
}

// The replay on in both runs, the repeat of recurring periods on or off.
RunSummary run_with_repeat(const Circuit& circuit, long periods, bool repeat) {
  SimulationOptions options;
  options.periods = periods;
  options.output_signal = "out.v";
  options.repeat_recurring_periods = repeat;
  Simulation sim(circuit, options);
  return sim.run();
}

// Energy stored at the end of the run, 1/2 C v^2 + 1/2 L i^2 over the states: the change in
// stored energy over a period is a difference of two such sums, so its rounding scales with it.
double stored_energy_j(const Circuit& circuit, const RunSummary& run) {
  double w = 0.0;
  for (std::size_t s = 0; s < run.state_names.size(); ++s) {
    const std::string element = run.state_names[s].substr(0, run.state_names[s].find('.'));
    for (const Element& e : circuit.elements())
      if (e.name == element) w += 0.5 * e.value * run.final_state[s] * run.final_state[s];
  }
  return w;
}

// What must agree exactly however the periods were obtained: the number of periods and events,
// where the run ended, and the last period's place, mode and sequence of configurations.
void expect_same_periods(const RunSummary& a_run, const RunSummary& b_run) {
  ASSERT_TRUE(a_run.ok()) << a_run.message;
  ASSERT_TRUE(b_run.ok()) << b_run.message;
  EXPECT_EQ(a_run.cycles, b_run.cycles);
  EXPECT_EQ(a_run.events, b_run.events);
  EXPECT_EQ(a_run.end_time_s, b_run.end_time_s);
  const CycleMetrics& a = a_run.last_cycle;
  const CycleMetrics& b = b_run.last_cycle;
  EXPECT_EQ(a.index, b.index);
  EXPECT_EQ(a.start_time_s, b.start_time_s);
  EXPECT_EQ(a.mode, b.mode);
  EXPECT_EQ(a.events, b.events);
  ASSERT_EQ(a.intervals.size(), b.intervals.size());
  for (std::size_t i = 0; i < a.intervals.size(); ++i)
    EXPECT_EQ(a.intervals[i].pattern, b.intervals[i].pattern);
  ASSERT_EQ(a.signals.size(), b.signals.size());
}

// Every figure of the summary: the last period's metrics, the start-up figures, the state.
void expect_same_run(const Circuit& circuit, const RunSummary& replayed, const RunSummary& direct) {
  expect_same_periods(replayed, direct);
  if (::testing::Test::HasFatalFailure()) return;
  const CycleMetrics& a = replayed.last_cycle;
  const CycleMetrics& b = direct.last_cycle;
  for (std::size_t i = 0; i < a.intervals.size(); ++i)
    expect_close(a.intervals[i].fraction, b.intervals[i].fraction, 1.0, "interval fraction");
  for (std::size_t j = 0; j < a.signals.size(); ++j) {
    const std::string name = replayed.recorded[j].name;
    const double scale = std::max(std::abs(b.signals[j].min), std::abs(b.signals[j].max));
    expect_close(a.signals[j].average, b.signals[j].average, scale, name + " average");
    expect_close(a.signals[j].rms, b.signals[j].rms, scale, name + " rms");
    expect_close(a.signals[j].min, b.signals[j].min, scale, name + " min");
    expect_close(a.signals[j].max, b.signals[j].max, scale, name + " max");
  }
  const double energy = std::max(std::abs(b.energy_in_j), stored_energy_j(circuit, direct));
  expect_close(a.energy_in_j, b.energy_in_j, energy, "energy in");
  expect_close(a.dissipated_j, b.dissipated_j, energy, "dissipated");
  expect_close(a.stored_energy_change_j, b.stored_energy_change_j, energy, "stored change");
  ASSERT_EQ(a.element_energy.size(), b.element_energy.size());
  for (std::size_t k = 0; k < a.element_energy.size(); ++k)
    expect_close(a.element_energy[k].energy_j, b.element_energy[k].energy_j, energy,
                 "element energy " + std::to_string(k));
  ASSERT_EQ(replayed.startup.peak_inductor_current_a.size(),
            direct.startup.peak_inductor_current_a.size());
  for (std::size_t k = 0; k < direct.startup.peak_inductor_current_a.size(); ++k)
    expect_close(replayed.startup.peak_inductor_current_a[k],
                 direct.startup.peak_inductor_current_a[k], 0.0,
                 "peak current of " + direct.startup.inductors[k]);
  expect_close(replayed.startup.output_peak, direct.startup.output_peak, 0.0, "output peak");
  EXPECT_EQ(replayed.startup.settling_cycle, direct.startup.settling_cycle);
  EXPECT_EQ(replayed.startup.steady_state_cycle, direct.startup.steady_state_cycle);
  ASSERT_EQ(replayed.final_state.size(), direct.final_state.size());
  for (Eigen::Index s = 0; s < direct.final_state.size(); ++s)
    expect_close(replayed.final_state[s], direct.final_state[s],
                 direct.final_state.cwiseAbs().maxCoeff(), replayed.state_names[s]);
}

// A repeated period is the same computation on the same data as the one it repeats: every
// figure must be identical, to the bit, to the run that computes each period.
void expect_identical_run(const RunSummary& repeated, const RunSummary& computed) {
  expect_same_periods(repeated, computed);
  if (::testing::Test::HasFatalFailure()) return;
  EXPECT_EQ(repeated.final_state, computed.final_state);
  const CycleMetrics& a = repeated.last_cycle;
  const CycleMetrics& b = computed.last_cycle;
  for (std::size_t i = 0; i < a.intervals.size(); ++i)
    EXPECT_EQ(a.intervals[i].fraction, b.intervals[i].fraction);
  for (std::size_t j = 0; j < a.signals.size(); ++j) {
    SCOPED_TRACE(repeated.recorded[j].name);
    EXPECT_EQ(a.signals[j].average, b.signals[j].average);
    EXPECT_EQ(a.signals[j].rms, b.signals[j].rms);
    EXPECT_EQ(a.signals[j].min, b.signals[j].min);
    EXPECT_EQ(a.signals[j].max, b.signals[j].max);
  }
  EXPECT_EQ(a.energy_in_j, b.energy_in_j);
  EXPECT_EQ(a.dissipated_j, b.dissipated_j);
  EXPECT_EQ(a.stored_energy_change_j, b.stored_energy_change_j);
  EXPECT_EQ(a.state_change, b.state_change);
  ASSERT_EQ(a.element_energy.size(), b.element_energy.size());
  for (std::size_t k = 0; k < a.element_energy.size(); ++k)
    EXPECT_EQ(a.element_energy[k].energy_j, b.element_energy[k].energy_j);
  EXPECT_EQ(repeated.startup.peak_inductor_current_a, computed.startup.peak_inductor_current_a);
  EXPECT_EQ(repeated.startup.output_peak, computed.startup.output_peak);
  EXPECT_EQ(repeated.startup.settling_cycle, computed.startup.settling_cycle);
  EXPECT_EQ(repeated.startup.steady_state_cycle, computed.startup.steady_state_cycle);
}

double output_average(const RunSummary& summary) {
  for (std::size_t j = 0; j < summary.recorded.size(); ++j)
    if (summary.recorded[j].name == "out.v") return summary.last_cycle.signals[j].average;
  ADD_FAILURE() << "out.v is not recorded";
  return 0.0;
}

// Two-phase buck, 24 V to about 5 V, with an input LC filter, inductor DCR and capacitor ESR:
// CCM at 1 ohm (ripple about 1.5 A p-p per phase against 2.5 A per phase), so every period
// after the start-up runs the same pieces. Recording every state and node voltage gives
// signals whose slope changes sign inside pieces (interior extrema).
Circuit interleaved_buck() {
  PwmModulator a = test::pwm(300e3, 0.22, "pwm_a");
  PwmModulator b = test::pwm(300e3, 0.22, "pwm_b");
  b.phase = 0.5;
  Circuit c;
  c.add_voltage_source("Vin", "src", "0", Waveform::constant(24.0))
      .add_inductor("Lf", "src", "bus", 1.5e-6, InductorOptions{20e-3})
      .add_capacitor("Cbus", "bus", "0", 22e-6, CapacitorOptions{5e-3})
      .add_switch("Sa", "bus", "swa", "pwm_a", SwitchOptions{15e-3, kOpen})
      .add_diode("Da", "0", "swa", DiodeOptions{20e-3, 0.4, kOpen})
      .add_inductor("La", "swa", "out", 6.8e-6, InductorOptions{8e-3})
      .add_switch("Sb", "bus", "swb", "pwm_b", SwitchOptions{15e-3, kOpen})
      .add_diode("Db", "0", "swb", DiodeOptions{20e-3, 0.4, kOpen})
      .add_inductor("Lb", "swb", "out", 6.8e-6, InductorOptions{8e-3})
      .add_capacitor("Cout", "out", "0", 100e-6, CapacitorOptions{3e-3})
      .add_resistor("Rload", "out", "0", 1.0)
      .add_modulator(std::move(a))
      .add_modulator(std::move(b));
  return c;
}

// An extra load from out to ground through a switch that a schedule turns on and off at the
// given times (a load step: 1 mOhm on, open off).
void add_load_step(Circuit& c, std::vector<std::pair<double, bool>> changes, double load_ohm) {
  GateSchedule step;
  step.name = "load_step";
  step.changes = std::move(changes);
  c.add_switch("Sload", "out", "extra", "load_step", SwitchOptions{1e-3, kOpen})
      .add_resistor("Rextra", "extra", "0", load_ohm)
      .add_modulator(std::move(step));
}

// Synchronous buck with dead time at light load: the inductor current turns negative every
// period, and the body diodes conduct in the dead times (forced on at each gate edge, by the
// consistency search the replay reruns at every edge).
Circuit synchronous_buck_light_load(Waveform input = Waveform::constant(12.0)) {
  ComplementaryPwm pair;
  pair.name = "bridge";
  pair.frequency_hz = 400e3;
  pair.duty_cycle = 0.4;
  pair.dead_time_s = 40e-9;
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", std::move(input))
      .add_switch("Shigh", "in", "sw", "bridge.high", SwitchOptions{8e-3, kOpen})
      .add_diode("Dhigh", "sw", "in", DiodeOptions{10e-3, 0.7, kOpen})
      .add_switch("Slow", "sw", "0", "bridge.low", SwitchOptions{5e-3, kOpen})
      .add_diode("Dlow", "0", "sw", DiodeOptions{10e-3, 0.7, kOpen})
      .add_inductor("L1", "sw", "out", 2.2e-6, InductorOptions{4e-3})
      .add_capacitor("Cout", "out", "0", 47e-6, CapacitorOptions{2e-3})
      .add_resistor("Rload", "out", "0", 20.0)
      .add_modulator(std::move(pair));
  return c;
}

// The output average of every period a run hands to its observer (which wants no pieces, so
// the replay and the repeat stay on).
struct OutputAverages : Observer {
  std::vector<double> averages;
  bool wants_pieces_and_events() const override { return false; }
  void on_cycle(const CycleMetrics& m) override { averages.push_back(m.signals.at(0).average); }
};

std::vector<double> output_averages(const Circuit& circuit, long periods, bool replay) {
  SimulationOptions options;
  options.periods = periods;
  options.recorded_signals = {"out.v"};
  options.output_signal = "out.v";
  options.replay_repeating_periods = replay;
  options.repeat_recurring_periods = replay;
  OutputAverages observer;
  const RunSummary summary = Simulation(circuit, options).run(&observer);
  EXPECT_TRUE(summary.ok()) << summary.message;
  if (replay) EXPECT_GE(summary.replayed_periods, periods / 2);  // not vacuous
  return observer.averages;
}

// Mean of the output averages of periods [first, last).
double mean_of(const std::vector<double>& v, std::size_t first, std::size_t last) {
  double sum = 0.0;
  for (std::size_t k = first; k < last; ++k) sum += v[k];
  return sum / static_cast<double>(last - first);
}

// The synchronous buck through a load step (on at period 400, off at period 700) and an input
// step from 12 V to 10 V (period 1 000): the periods between them are replayed, and not one
// across them. Every period's output must agree with the piece engine's.
TEST(PeriodReplay, ReplayedPeriodsStopAtEveryLoadStepAndSourceStep) {
  Circuit circuit = synchronous_buck_light_load(Waveform::step(2.5e-3, 12.0, 10.0));
  add_load_step(circuit, {{1e-3, true}, {1.75e-3, false}}, 2.0);
  const std::vector<double> replayed = output_averages(circuit, 1400, true);
  const std::vector<double> direct = output_averages(circuit, 1400, false);
  ASSERT_EQ(replayed.size(), direct.size());
  for (std::size_t k = 0; k < direct.size(); ++k)
    EXPECT_NEAR(replayed[k], direct[k], kInvariance * std::abs(direct[k])) << "period " << k;
  // The steps show in the means over the last 100 periods before each change (the output rings
  // with a Q of about 90 at 104 kHz). At light load the current is negative at the end of the
  // on-time, so the high-side body diode carries it through the dead time and the effective
  // duty cycle is above D; the extra 2.4 A load turns the current positive and hands the dead
  // time to the low-side diode, so the output must fall (common practice, no source). The
  // output of a buck is proportional to its input (Erickson & Maksimovic, 2nd ed., ch. 2),
  // to within the diodes' 0.7 V drops over 3 % of the period, which do not scale: 0.5 %.
  const double before = mean_of(direct, 300, 400), loaded = mean_of(direct, 600, 700);
  const double after = mean_of(direct, 1300, 1400);
  EXPECT_LT(loaded, before - 0.1);
  EXPECT_NEAR(after / before, 10.0 / 12.0, 0.005);
}

TEST(PeriodReplay, ReplayedPeriodsEqualThePieceEngineInACcmInterleavedBuck) {
  const Circuit circuit = interleaved_buck();
  for (long periods : {50L, 400L}) {
    SCOPED_TRACE(std::to_string(periods) + " periods");
    const RunSummary replayed = run(circuit, periods, true);
    const RunSummary direct = run(circuit, periods, false);
    EXPECT_EQ(direct.replayed_periods, 0);
    // Not vacuous: the start-up (about its first 25 periods, where the sequence of pieces still
    // changes from period to period) runs on the piece engine, every later period is a replay.
    EXPECT_GE(replayed.replayed_periods, periods - 30);
    EXPECT_EQ(replayed.last_cycle.mode, ConductionMode::kCcm);
    expect_same_run(circuit, replayed, direct);
  }
}

// Only the output recorded and no energy accounting: the inductor peaks come from the states
// themselves (not from recorded signals), and the replay builds no energy forms.
TEST(PeriodReplay, InductorPeaksOutsideTheRecordedSignalsEqualThePieceEngines) {
  SimulationOptions options;
  options.recorded_signals = {"out.v"};
  options.energy_accounting = false;
  const Circuit circuit = interleaved_buck();
  const RunSummary replayed = run(circuit, 400, true, options);
  const RunSummary direct = run(circuit, 400, false, options);
  EXPECT_GE(replayed.replayed_periods, 370);
  ASSERT_EQ(replayed.startup.peak_inductor_current_a.size(), 3u);  // Lf, La, Lb
  EXPECT_TRUE(replayed.last_cycle.element_energy.empty());
  expect_same_run(circuit, replayed, direct);
}

TEST(PeriodReplay, ReplayedPeriodsEqualThePieceEngineWithBodyDiodesInTheDeadTimes) {
  const Circuit circuit = synchronous_buck_light_load();
  const RunSummary replayed = run(circuit, 300, true);
  const RunSummary direct = run(circuit, 300, false);
  EXPECT_GE(replayed.replayed_periods, 250);  // all but the start-up (about 30 periods)
  // The light load takes the inductor current below zero in every period.
  const std::size_t inductor =
      static_cast<std::size_t>(std::find_if(replayed.recorded.begin(), replayed.recorded.end(),
                                            [](const SignalInfo& s) { return s.name == "L1.i"; }) -
                               replayed.recorded.begin());
  ASSERT_LT(inductor, replayed.recorded.size());
  EXPECT_LT(replayed.last_cycle.signals[inductor].min, 0.0);
  expect_same_run(circuit, replayed, direct);
}

// The boost of test_circuits.hpp starts from rest in CCM (the output is still below the input)
// and ends in DCM: the replay runs the first periods and must give up at the first period in
// which the diode current reaches zero, where the piece engine takes over.
TEST(PeriodReplay, GivesUpAtTheFirstDiodeTurnOffWhenTheStartUpEndsInDcm) {
  const Circuit circuit = test::dcm_boost();
  for (long periods : {8L, 30L, 300L}) {
    SCOPED_TRACE(std::to_string(periods) + " periods");
    const RunSummary replayed = run(circuit, periods, true);
    const RunSummary direct = run(circuit, periods, false);
    expect_same_run(circuit, replayed, direct);
    if (periods == 300) {
      EXPECT_GT(replayed.replayed_periods, 0);
      EXPECT_LT(replayed.replayed_periods, 100);
      EXPECT_EQ(replayed.last_cycle.mode, ConductionMode::kDcm);
    }
  }
}

// The DCM boost of test_circuits.hpp with a 10 uF output capacitor: the output settles within
// about 1 000 periods (R C = 120 periods), and from about period 1 300 on every period starts
// from the state of the period before, to the last bit.
Circuit fast_settling_dcm_boost(bool with_load_step, Waveform input = Waveform::constant(12.0)) {
  Circuit c = test::dcm_boost(test::pwm(200e3, 0.3), 10e-6, std::move(input));
  if (with_load_step) {
    // A second 60 ohm load joins at 12.5 ms, period 2 500, long after the steady state.
    add_load_step(c, {{12.5e-3, true}}, 60.0);
  }
  return c;
}

// A period that ends, to the bit, in the state it began in is repeated, not computed again: the
// run must end with every figure the piece engine computes period by period.
TEST(PeriodReplay, PeriodsThatStartWhereThePeriodBeforeStartedRepeatItExactly) {
  const Circuit circuit = fast_settling_dcm_boost(false);
  const RunSummary repeated = run_with_repeat(circuit, 3000, true);
  const RunSummary computed = run_with_repeat(circuit, 3000, false);
  EXPECT_EQ(computed.repeated_periods, 0);
  // Not vacuous: most of the run lies past the steady state reached to the last bit.
  EXPECT_GE(repeated.repeated_periods, 1000);
  EXPECT_EQ(repeated.recurrence_periods, 1);
  EXPECT_EQ(repeated.last_cycle.mode, ConductionMode::kDcm);
  EXPECT_GE(repeated.startup.steady_state_cycle, 0);
  expect_identical_run(repeated, computed);
  // and the piece engine alone, without replay or repeat, agrees to rounding
  expect_same_run(circuit, repeated, run(circuit, 3000, false));
}

// The synchronous buck at light load does not settle to one state: by about period 4 900 its
// rounding has settled into a cycle of 24 states, which the run then repeats in turn. (The
// length of the cycle belongs to the rounding, not to the circuit: an engine change may move
// it. The identity below must hold whatever it is.)
TEST(PeriodReplay, PeriodsOfACycleOfRoundedStatesRepeatInTurn) {
  const Circuit circuit = synchronous_buck_light_load();
  const RunSummary repeated = run_with_repeat(circuit, 10000, true);
  const RunSummary computed = run_with_repeat(circuit, 10000, false);
  EXPECT_GE(repeated.repeated_periods, 1000);
  EXPECT_GE(repeated.recurrence_periods, 2);  // not vacuous: more than one period in turn
  expect_identical_run(repeated, computed);
}

// A run of `periods` with at least `at_least` periods repeated, which ends with every figure,
// to the bit, of the run that computes each period (and to rounding of the piece engine alone).
// Returns the run with the repeat.
RunSummary expect_repeats_exactly(const Circuit& circuit, long periods, long at_least) {
  const RunSummary repeated = run_with_repeat(circuit, periods, true);
  const RunSummary computed = run_with_repeat(circuit, periods, false);
  EXPECT_EQ(computed.repeated_periods, 0);
  EXPECT_GE(repeated.repeated_periods, at_least);
  expect_identical_run(repeated, computed);
  expect_same_run(circuit, repeated, run(circuit, periods, false));
  return repeated;
}

// The same boost with a load step at period 2 500. The periods between the steady state (about
// period 1 300) and the step repeat; the three periods around the step are computed; after it,
// the periods repeat again from the new steady state. A repeat carried across the step would
// miss it: the run must end, to the bit, as the run that computes every period.
TEST(PeriodReplay, PeriodsRepeatBetweenScheduleChangesButNeverAcrossOne) {
  const Circuit circuit = fast_settling_dcm_boost(true);
  expect_repeats_exactly(circuit, 2498, 1000);  // before the step only
  const RunSummary repeated = expect_repeats_exactly(circuit, 6000, 2000);
  // The step halves the load resistance: K = 2L/(R T) doubles and the ideal DCM ratio
  // M = (1 + sqrt(1 + 4 D^2 / K)) / 2 falls from 1.77 to 1.46 (Erickson & Maksimovic,
  // Fundamentals of Power Electronics, 2nd ed., ch. 5), so the output must have dropped.
  const RunSummary before_step = run(circuit, 2400, true);
  EXPECT_LT(output_average(repeated), 0.9 * output_average(before_step));
}

// The load joins at period 2 500 and leaves at period 4 000: three stretches repeat, and after
// the load has left the output returns to the steady state it had before it joined (the open
// switch leaves the circuit as it was; rounding may settle differently, hence 1e-12).
TEST(PeriodReplay, AfterALoadStepAndItsReleaseTheSteadyStateOfTheStartReturns) {
  Circuit circuit = test::dcm_boost(test::pwm(200e3, 0.3), 10e-6);
  add_load_step(circuit, {{12.5e-3, true}, {20e-3, false}}, 60.0);
  const RunSummary repeated = expect_repeats_exactly(circuit, 6000, 2500);
  const double before = output_average(run(circuit, 2400, true));
  EXPECT_NEAR(output_average(repeated), before, 1e-12 * before);
}

// The same for a source: the input sags from 12 V to 10 V between 12.5 and 12.6 ms (periods
// 2 500 to 2 520) and stays there. The periods before the sag and those after its end repeat;
// none of the ramp's, whose input moves.
TEST(PeriodReplay, PeriodsRepeatBetweenSourceBreakpointsButNeverAcrossOne) {
  const Circuit circuit = fast_settling_dcm_boost(
      false, Waveform::piecewise_linear({{12.5e-3, 12.0}, {12.6e-3, 10.0}}));
  expect_repeats_exactly(circuit, 2498, 1000);
  const RunSummary repeated = expect_repeats_exactly(circuit, 6000, 2000);
  // The circuit is linear, and its devices switch where a current or a voltage changes sign
  // (zero forward drop), so its periodic steady state is homogeneous of degree one in the input
  // (homogeneity of linear circuits, common practice, no source): both steady outputs, reached
  // to the last bit, must stand in the ratio 10/12 to rounding.
  const double before = output_average(run(circuit, 2400, true));
  EXPECT_NEAR(output_average(repeated) / before, 10.0 / 12.0, 1e-12);
}

// Counts what a run hands to its observer and keeps the last period's metrics; `wants_pieces`
// is its answer to Observer::wants_pieces_and_events.
struct CountingObserver : Observer {
  explicit CountingObserver(bool wants_pieces) : wants_pieces(wants_pieces) {}
  bool wants_pieces;
  long cycles = 0, pieces = 0, events = 0;
  bool in_order = true;  // on_cycle came with indices 0, 1, 2, ...
  CycleMetrics last;
  void on_piece(const PieceView&) override { ++pieces; }
  void on_event(const EventRecord&) override { ++events; }
  void on_cycle(const CycleMetrics& m) override {
    in_order = in_order && m.index == cycles;
    ++cycles;
    last = m;
  }
  bool wants_pieces_and_events() const override { return wants_pieces; }
};

RunSummary run_observed(Observer& observer, long periods) {
  SimulationOptions options;
  options.periods = periods;
  return Simulation(fast_settling_dcm_boost(false), options).run(&observer);
}

// A cycle-only observer (a progress display) does not stop the replay or the repeat: it still
// receives every period, in order, with the metrics the run ends with, and nothing else.
TEST(PeriodReplay, AnObserverOfPeriodsOnlyReceivesEveryPeriodWhilePeriodsRepeat) {
  CountingObserver observer(false);
  const RunSummary summary = run_observed(observer, 3000);
  EXPECT_GE(summary.repeated_periods, 1000);
  EXPECT_EQ(observer.cycles, 3000);
  EXPECT_TRUE(observer.in_order);
  EXPECT_EQ(observer.pieces, 0);
  EXPECT_EQ(observer.events, 0);
  EXPECT_EQ(observer.last.start_time_s, summary.last_cycle.start_time_s);
  ASSERT_EQ(observer.last.signals.size(), summary.last_cycle.signals.size());
  for (std::size_t j = 0; j < observer.last.signals.size(); ++j)
    EXPECT_EQ(observer.last.signals[j].average, summary.last_cycle.signals[j].average);
}

// An observer of every piece sees every period computed: nothing is repeated or replayed.
TEST(PeriodReplay, AnObserverOfPiecesSeesEveryPeriodComputed) {
  CountingObserver observer(true);
  const RunSummary summary = run_observed(observer, 2000);
  EXPECT_EQ(observer.cycles, 2000);
  EXPECT_TRUE(observer.in_order);
  EXPECT_EQ(summary.repeated_periods, 0);
  EXPECT_EQ(summary.replayed_periods, 0);
}

}  // namespace
}  // namespace pulsewise
