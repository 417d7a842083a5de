// The circuit-file loader. The reference for every expected number is the circuit text written
// in the test itself (a loaded value must equal the literal written in the file, compared
// exactly because the SI parser rounds correctly); the reference for every expected line number
// is the position of the offending line in that text. Prefix factors: BIPM, The International
// System of Units (SI Brochure), 9th ed., 2019, Table 7.
#include "pulsewise/circuit_file.hpp"

#include <gtest/gtest.h>

#include "pulsewise/simulation.hpp"

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <initializer_list>
#include <iostream>
#include <random>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

namespace pulsewise {
namespace {

namespace fs = std::filesystem;

using Lines = std::vector<std::string>;

// The example circuits in data/.
const char* const kExampleFiles[] = {
    "sensor-node-boost.toml",
    "rack-sync-buck.toml",
    "display-bias-buckboost.toml",
    "wide-input-sepic.toml",
};

std::string join(const Lines& lines) {
  std::string text;
  for (const auto& line : lines) text += line + "\n";
  return text;
}

// A small valid buck converter; tests replace or append lines to break it in one place.
Lines base_circuit() {
  return {
      "[circuit]",                  // 1
      "name = \"bench buck\"",      // 2
      "[[pwm]]",                    // 3
      "name = \"pwm1\"",            // 4
      "frequency = \"100 kHz\"",    // 5
      "duty = 0.5",                 // 6
      "[[voltage_source]]",         // 7
      "name = \"Vin\"",             // 8
      "nodes = [\"in\", \"0\"]",    // 9
      "voltage = \"12 V\"",         // 10
      "[[switch]]",                 // 11
      "name = \"S1\"",              // 12
      "nodes = [\"in\", \"sw\"]",   // 13
      "gate = \"pwm1\"",            // 14
      "[[diode]]",                  // 15
      "name = \"D1\"",              // 16
      "nodes = [\"0\", \"sw\"]",    // 17
      "[[inductor]]",               // 18
      "name = \"L1\"",              // 19
      "nodes = [\"sw\", \"out\"]",  // 20
      "inductance = \"10 uH\"",     // 21
      "[[capacitor]]",              // 22
      "name = \"C1\"",              // 23
      "nodes = [\"out\", \"0\"]",   // 24
      "capacitance = \"47 uF\"",    // 25
      "[[resistor]]",               // 26
      "name = \"R1\"",              // 27
      "nodes = [\"out\", \"0\"]",   // 28
      "resistance = \"5 Ohm\"",     // 29
  };
}

std::string replaced(int line, const std::string& text) {
  Lines lines = base_circuit();
  lines.at(static_cast<std::size_t>(line - 1)) = text;
  return join(lines);
}

std::string appended(std::initializer_list<std::string> more) {
  Lines lines = base_circuit();
  lines.insert(lines.end(), more.begin(), more.end());
  return join(lines);
}

struct Expected {
  ErrorKind kind;
  int line;
  std::string element;  // "" when the message names no element
  std::string fix;      // a part of the fix text
};

// Loads text that must fail and checks the message: file, line, element and fix.
InputError expect_error(const std::string& text, const Expected& x) {
  try {
    parse_circuit_text(text, "bad.toml");
  } catch (const InputError& e) {
    const std::string what = e.what();
    EXPECT_EQ(e.kind(), x.kind) << what;
    EXPECT_EQ(e.where().file, "bad.toml") << what;
    EXPECT_EQ(e.where().line, x.line) << what;
    EXPECT_EQ(what.rfind("bad.toml:" + std::to_string(x.line) + ":", 0), 0u) << what;
    EXPECT_EQ(e.element(), x.element) << what;
    if (!x.element.empty()) {
      EXPECT_NE(what.find("element '" + x.element + "': "), std::string::npos) << what;
    }
    EXPECT_NE(e.fix().find(x.fix), std::string::npos) << "fix: " << e.fix();
    EXPECT_NE(what.find(x.fix), std::string::npos) << what;
    return e;
  }
  ADD_FAILURE() << "no InputError for:\n" << text;
  return InputError(ErrorKind::kInvalidValue, "", "", "");
}

TEST(CircuitFile, LoadsTheBaseCircuitOfTheseTests) {
  const CircuitFile f = parse_circuit_text(join(base_circuit()), "base.toml");
  EXPECT_EQ(f.circuit.name(), "bench buck");
  EXPECT_EQ(f.circuit.elements().size(), 6u);
  EXPECT_EQ(f.circuit.pwm_modulators().size(), 1u);
  EXPECT_EQ(f.path, "base.toml");
  EXPECT_EQ(f.text, join(base_circuit()));
}

// Round trip: every number below is the one written in the text.
TEST(CircuitFile, LoadsEveryElementKindWithTheValuesWrittenInTheFile) {
  const std::string text = R"(
[circuit]
name = "all kinds"
description = "one of each"

[[resistor]]
name = "R1"
nodes = ["out", "0"]
resistance = "60 Ohm"

[[inductor]]
name = "L1"
nodes = ["in", "sw"]
inductance = "10 uH"
winding_resistance = "20 mOhm"
initial_current = "-1.5 A"

[[capacitor]]
name = "C1"
nodes = ["out", "0"]
capacitance = 4.7e-5
series_resistance = "5 m"
initial_voltage = 3.3

[[voltage_source]]
name = "Vin"
nodes = ["in", "0"]
voltage = { kind = "step", time = "1 ms", before = "10 V", after = "12 V" }

[[current_source]]
name = "Iload"
nodes = ["0", "out"]
current = { kind = "table", points = [["0 s", "0 A"], ["2 ms", "1.5 A"], ["3 ms", 2]] }

[[current_source]]
name = "Ibias"
nodes = ["0", "out"]
current = { kind = "constant", value = "250 mA" }

[[switch]]
name = "S1"
nodes = ["sw", "0"]
gate = "pwm1"
on_resistance = "10 mOhm"
off_resistance = "1 MOhm"

[[switch]]
name = "S2"
nodes = ["sw", "x"]
gate = "hb.low"

[[diode]]
name = "D1"
nodes = ["sw", "out"]
on_resistance = "30 mOhm"
forward_voltage = "0.45 V"
off_resistance = "open"

[[resistor]]
name = "R2"
nodes = ["x", 0]
resistance = "2.2k"

[[switch]]
name = "S3"
nodes = ["out", "y"]
gate = "load_step"

[[resistor]]
name = "R3"
nodes = ["y", "gnd"]
resistance = 100

[[pwm]]
name = "pwm1"
frequency = "200 kHz"
duty = 0.3
phase = 0.25
soft_start = { initial_duty = 0.05, periods = 200 }

[[complementary_pwm]]
name = "hb"
frequency = "1 MHz"
duty = 0.4
dead_time = "50 ns"

[[schedule]]
name = "load_step"
initial = "off"
changes = [["2 ms", "on"], ["5 ms", false]]

[run]
periods = 2000
switching_period = "5 us"
substeps_per_period = 4
max_step_norm = 0.25
event_time_tolerance = 1e-13
device_condition_tolerance = 1e-8
max_events_per_period = 50
max_consistency_iterations = 32
boundary_tolerance = 2e-3
stop_at_steady_state = true
steady_state_tolerance = 1e-7
steady_state_periods = 3
output_signal = "out.v"
settling_band = 0.01
cache = false
reuse_piece_operators = false
energy_accounting = false

[record]
signals = ["L1.i", "out.v", "S1.v", "D1.i"]
samples_per_period = 32
windows = [["9.5 ms", "10 ms"], ["0", "0.5 ms"]]
event_log = false
cycle_table = false
flush_every_periods = 500
file = "traces/all.h5"
)";
  const CircuitFile f = parse_circuit_text(text, "all.toml");
  const Circuit& c = f.circuit;
  EXPECT_EQ(c.name(), "all kinds");
  EXPECT_EQ(f.description, "one of each");
  ASSERT_EQ(c.elements().size(), 12u);

  const Element& r1 = c.elements()[c.find_element("R1")];
  EXPECT_EQ(r1.kind, ElementKind::kResistor);
  EXPECT_EQ(r1.node_a, "out");
  EXPECT_EQ(r1.node_b, "0");
  EXPECT_EQ(r1.value, 60.0);

  const Element& l1 = c.elements()[c.find_element("L1")];
  EXPECT_EQ(l1.kind, ElementKind::kInductor);
  EXPECT_EQ(l1.value, 10e-6);
  EXPECT_EQ(l1.series_resistance_ohm, 20e-3);
  EXPECT_EQ(l1.initial_value, -1.5);

  const Element& c1 = c.elements()[c.find_element("C1")];
  EXPECT_EQ(c1.value, 4.7e-5);
  EXPECT_EQ(c1.series_resistance_ohm, 5e-3);
  EXPECT_EQ(c1.initial_value, 3.3);

  const Waveform& vin = c.elements()[c.find_element("Vin")].waveform;
  EXPECT_EQ(vin.kind(), Waveform::Kind::kStep);
  EXPECT_EQ(vin.value(0.0), 10.0);
  EXPECT_EQ(vin.value(1e-3), 12.0);
  EXPECT_EQ(vin.next_breakpoint_after(0.0), 1e-3);

  const Waveform& iload = c.elements()[c.find_element("Iload")].waveform;
  ASSERT_EQ(iload.kind(), Waveform::Kind::kPiecewiseLinear);
  ASSERT_EQ(iload.points().size(), 3u);
  EXPECT_EQ(iload.points()[1].first, 2e-3);
  EXPECT_EQ(iload.points()[1].second, 1.5);
  EXPECT_EQ(iload.points()[2].first, 3e-3);
  EXPECT_EQ(iload.points()[2].second, 2.0);
  EXPECT_EQ(c.elements()[c.find_element("Ibias")].waveform.value(0.0), 250e-3);

  const Element& s1 = c.elements()[c.find_element("S1")];
  EXPECT_EQ(s1.kind, ElementKind::kSwitch);
  EXPECT_EQ(s1.gate, "pwm1");
  EXPECT_EQ(s1.on_resistance_ohm, 10e-3);
  EXPECT_EQ(s1.off_resistance_ohm, 1e6);
  const Element& s2 = c.elements()[c.find_element("S2")];
  EXPECT_EQ(s2.on_resistance_ohm, 0.0);     // default: ideal on-state
  EXPECT_EQ(s2.off_resistance_ohm, kOpen);  // default: exact open

  const Element& d1 = c.elements()[c.find_element("D1")];
  EXPECT_EQ(d1.kind, ElementKind::kDiode);
  EXPECT_EQ(d1.node_a, "sw");   // anode
  EXPECT_EQ(d1.node_b, "out");  // cathode
  EXPECT_EQ(d1.on_resistance_ohm, 30e-3);
  EXPECT_EQ(d1.forward_voltage_v, 0.45);
  EXPECT_EQ(d1.off_resistance_ohm, kOpen);

  const Element& r2 = c.elements()[c.find_element("R2")];
  EXPECT_EQ(r2.node_b, "0");  // an integer node name is read as its decimal text
  EXPECT_EQ(r2.value, 2.2e3);
  EXPECT_EQ(c.elements()[c.find_element("R3")].node_b, "gnd");

  ASSERT_EQ(c.pwm_modulators().size(), 1u);
  const PwmModulator& pwm = c.pwm_modulators()[0];
  EXPECT_EQ(pwm.name, "pwm1");
  EXPECT_EQ(pwm.frequency_hz, 200e3);
  EXPECT_EQ(pwm.duty_cycle, 0.3);
  EXPECT_EQ(pwm.phase, 0.25);
  EXPECT_EQ(pwm.soft_start.initial_duty, 0.05);
  EXPECT_EQ(pwm.soft_start.periods, 200);

  ASSERT_EQ(c.complementary_modulators().size(), 1u);
  const ComplementaryPwm& hb = c.complementary_modulators()[0];
  EXPECT_EQ(hb.frequency_hz, 1e6);
  EXPECT_EQ(hb.duty_cycle, 0.4);
  EXPECT_EQ(hb.dead_time_s, 50e-9);
  EXPECT_EQ(hb.phase, 0.0);

  ASSERT_EQ(c.gate_schedules().size(), 1u);
  const GateSchedule& g = c.gate_schedules()[0];
  EXPECT_FALSE(g.initial_on);
  ASSERT_EQ(g.changes.size(), 2u);
  EXPECT_EQ(g.changes[0], (std::pair<double, bool>{2e-3, true}));
  EXPECT_EQ(g.changes[1], (std::pair<double, bool>{5e-3, false}));

  const SimulationOptions& s = f.simulation;
  EXPECT_EQ(s.periods, 2000);
  EXPECT_EQ(s.switching_period_s, 5e-6);
  EXPECT_EQ(s.substeps_per_period, 4);
  EXPECT_EQ(s.max_step_norm, 0.25);
  EXPECT_EQ(s.event_time_tolerance, 1e-13);
  EXPECT_EQ(s.device_condition_tolerance, 1e-8);
  EXPECT_EQ(s.max_events_per_period, 50);
  EXPECT_EQ(s.max_consistency_iterations, 32);
  EXPECT_EQ(s.boundary_tolerance, 2e-3);
  EXPECT_TRUE(s.stop_at_steady_state);
  EXPECT_EQ(s.steady_state_tolerance, 1e-7);
  EXPECT_EQ(s.steady_state_periods, 3);
  EXPECT_EQ(s.output_signal, "out.v");
  EXPECT_EQ(s.settling_band, 0.01);
  EXPECT_FALSE(s.cache);
  EXPECT_FALSE(s.reuse_piece_operators);
  EXPECT_FALSE(s.energy_accounting);
  EXPECT_EQ(s.recorded_signals, (std::vector<std::string>{"L1.i", "out.v", "S1.v", "D1.i"}));

  const RecordingOptions& r = f.recording;
  EXPECT_EQ(r.samples_per_period, 32);
  ASSERT_EQ(r.windows.size(), 2u);  // sorted by start
  EXPECT_EQ(r.windows[0].start_s, 0.0);
  EXPECT_EQ(r.windows[0].end_s, 0.5e-3);
  EXPECT_EQ(r.windows[1].start_s, 9.5e-3);
  EXPECT_EQ(r.windows[1].end_s, 10e-3);
  EXPECT_FALSE(r.record_events);
  EXPECT_FALSE(r.record_cycles);
  EXPECT_EQ(r.flush_every_periods, 500);
  EXPECT_EQ(r.output_path, "traces/all.h5");  // parse_circuit_text leaves paths as written
}

TEST(CircuitFile, ReadsSineAndRectifiedSineSourcesWithThePhaseAsAFractionOfThePeriod) {
  const CircuitFile f = parse_circuit_text(
      appended({"[[voltage_source]]", "name = \"Vline\"", "nodes = [\"ac\", \"0\"]",
                "voltage = { kind = \"sine\", offset = \"1 V\", amplitude = \"325 V\", "
                "frequency = \"50 Hz\", phase = 0.25 }",
                "[[resistor]]", "name = \"Rac\"", "nodes = [\"ac\", \"0\"]", "resistance = 1",
                "[[current_source]]", "name = \"Irect\"", "nodes = [\"0\", \"out\"]",
                "current = { kind = \"rectified_sine\", amplitude = \"2 A\", "
                "frequency = \"60 Hz\" }"}),
      "sine.toml");
  const Circuit& c = f.circuit;
  const Waveform& v = c.elements()[c.find_element("Vline")].waveform;
  EXPECT_EQ(v.kind(), Waveform::Kind::kSine);
  EXPECT_EQ(v.offset(), 1.0);
  EXPECT_EQ(v.amplitude(), 325.0);
  EXPECT_EQ(v.frequency_hz(), 50.0);
  // A quarter period is pi / 2 radians.
  EXPECT_DOUBLE_EQ(v.phase_rad(), std::acos(0.0));
  const Waveform& i = c.elements()[c.find_element("Irect")].waveform;
  EXPECT_EQ(i.kind(), Waveform::Kind::kRectifiedSine);
  EXPECT_EQ(i.offset(), 0.0);
  EXPECT_EQ(i.amplitude(), 2.0);
  EXPECT_EQ(i.frequency_hz(), 60.0);
  EXPECT_EQ(i.phase_rad(), 0.0);
}

TEST(CircuitFile, ReadsASaturatingInductorAndAConstantPowerLoad) {
  const CircuitFile f =
      parse_circuit_text(replaced(21,
                                  "inductance = \"10 uH\"\nsaturation_current = \"3 A\"\n"
                                  "saturated_inductance = \"2.2 uH\"\n[[constant_power_load]]\n"
                                  "name = \"P1\"\nnodes = [\"out\", \"0\"]\npower = \"2.5 W\"\n"
                                  "cut_in_voltage = \"0.5 V\""),
                         "nl.toml");
  const Circuit& c = f.circuit;
  const Element& l1 = c.elements()[c.find_element("L1")];
  EXPECT_EQ(l1.saturation_current_a, 3.0);
  EXPECT_EQ(l1.saturated_inductance_h, 2.2e-6);
  EXPECT_TRUE(l1.is_saturating());
  const Element& p1 = c.elements()[c.find_element("P1")];
  EXPECT_EQ(p1.kind, ElementKind::kConstantPowerLoad);
  EXPECT_EQ(p1.power_w, 2.5);
  EXPECT_EQ(p1.cut_in_voltage_v, 0.5);
  EXPECT_EQ(c.elements()[c.find_element("L1")].value, 10e-6);
}

TEST(CircuitFile, LeavesEveryOptionAtItsDefaultWhenRunAndRecordAreAbsent) {
  const CircuitFile f = parse_circuit_text(join(base_circuit()), "base.toml");
  const SimulationOptions defaults;
  const RecordingOptions recording_defaults;
  EXPECT_EQ(f.simulation.periods, defaults.periods);
  EXPECT_EQ(f.simulation.switching_period_s, defaults.switching_period_s);
  EXPECT_EQ(f.simulation.stop_at_steady_state, defaults.stop_at_steady_state);
  EXPECT_TRUE(f.simulation.recorded_signals.empty());
  EXPECT_TRUE(f.recording.windows.empty());
  EXPECT_EQ(f.recording.samples_per_period, recording_defaults.samples_per_period);
  EXPECT_EQ(f.circuit.elements()[0].off_resistance_ohm, kOpen);
}

TEST(CircuitFile, KeepsElementsInFileOrderAcrossKinds) {
  const CircuitFile f = parse_circuit_text(join(base_circuit()), "base.toml");
  std::vector<std::string> names;
  for (const Element& e : f.circuit.elements()) names.push_back(e.name);
  EXPECT_EQ(names, (std::vector<std::string>{"Vin", "S1", "D1", "L1", "C1", "R1"}));
}

TEST(CircuitFile, RecordsTheFileLineOfEveryElementAndModulator) {
  const CircuitFile f = parse_circuit_text(join(base_circuit()), "base.toml");
  const auto& els = f.circuit.elements();
  EXPECT_EQ(els[f.circuit.find_element("Vin")].where.line, 7);
  EXPECT_EQ(els[f.circuit.find_element("L1")].where.line, 18);
  EXPECT_EQ(els[f.circuit.find_element("R1")].where.line, 26);
  EXPECT_EQ(els[f.circuit.find_element("R1")].where.file, "base.toml");
  EXPECT_EQ(f.circuit.pwm_modulators()[0].where.line, 3);
}

TEST(CircuitFile, NamesTheCircuitAfterTheFileWhenNoNameIsGiven) {
  Lines lines = base_circuit();
  lines.erase(lines.begin(), lines.begin() + 2);
  EXPECT_EQ(parse_circuit_text(join(lines), "dir/my-boost.toml").circuit.name(), "my-boost");
}

TEST(CircuitFile, TurnsPeriodCountedWindowsIntoSeconds) {
  const CircuitFile f = parse_circuit_text(
      appended({"[run]", "periods = 1000", "[record]", "first_periods = 10", "last_periods = 20"}),
      "w.toml");
  // 100 kHz: a period is 10 us; the run ends at 1000 periods = 10 ms.
  ASSERT_EQ(f.recording.windows.size(), 2u);
  EXPECT_DOUBLE_EQ(f.recording.windows[0].start_s, 0.0);
  EXPECT_DOUBLE_EQ(f.recording.windows[0].end_s, 100e-6);
  EXPECT_DOUBLE_EQ(f.recording.windows[1].start_s, 9.8e-3);
  EXPECT_DOUBLE_EQ(f.recording.windows[1].end_s, 10e-3);
}

TEST(CircuitFile, MergesOverlappingWindows) {
  const CircuitFile f = parse_circuit_text(
      appended({"[record]", "windows = [[\"0\", \"2 ms\"], [\"1 ms\", \"3 ms\"]]"}), "w.toml");
  ASSERT_EQ(f.recording.windows.size(), 1u);
  EXPECT_EQ(f.recording.windows[0].end_s, 3e-3);
}

// --- errors ---------------------------------------------------------------------------------

TEST(CircuitFile, RejectsTomlSyntaxErrorAtItsLine) {
  // An unquoted value with a unit is the mistake the fix text anticipates.
  const InputError e = expect_error(replaced(21, "inductance = 10 uH"),
                                    {ErrorKind::kFileSyntax, 21, "", "need quotes"});
  EXPECT_NE(std::string(e.what()).find("not valid TOML"), std::string::npos);
}

// toml++ 3.3 asserts on this header in a debug build unless its assertions are off (toml.hpp).
TEST(CircuitFile, RejectsATripleBracketHeaderAsASyntaxError) {
  expect_error(replaced(22, "[[[capacitor]]"), {ErrorKind::kFileSyntax, 22, "", "TOML syntax"});
}

TEST(CircuitFile, RejectsUnknownKeyWithSuggestion) {
  const InputError e =
      expect_error(replaced(21, "inductanse = \"10 uH\""),
                   {ErrorKind::kUnknownKey, 21, "L1", "did you mean 'inductance'?"});
  EXPECT_NE(e.problem().find("'inductanse'"), std::string::npos) << e.problem();
}

TEST(CircuitFile, RejectsUnknownKeyWithoutCloseMatchByListingTheKnownKeys) {
  expect_error(appended({"colour = \"red\""}),
               {ErrorKind::kUnknownKey, 30, "R1", "known keys here are: name nodes resistance"});
}

TEST(CircuitFile, RejectsUnknownSectionWithSuggestion) {
  expect_error(appended({"[[inductors]]", "name = \"L2\""}),
               {ErrorKind::kUnknownKey, 30, "", "did you mean 'inductor'?"});
}

TEST(CircuitFile, RejectsUnknownRunOptionWithSuggestion) {
  expect_error(appended({"[run]", "period = 100"}),
               {ErrorKind::kUnknownKey, 31, "", "did you mean 'periods'?"});
}

TEST(CircuitFile, RejectsMissingRequiredKeyNamingItAndTheFix) {
  const InputError e =
      expect_error(replaced(29, "# no resistance"),
                   {ErrorKind::kMissingKey, 26, "R1", "add resistance = \"60 Ohm\""});
  EXPECT_NE(e.problem().find("'resistance'"), std::string::npos) << e.problem();
}

TEST(CircuitFile, RejectsAnElementWithoutNameNamingItsSection) {
  const InputError e =
      expect_error(replaced(19, "# no name"), {ErrorKind::kMissingKey, 18, "", "add name ="});
  EXPECT_NE(e.problem().find("[[inductor]]"), std::string::npos) << e.problem();
}

TEST(CircuitFile, RejectsWrongUnitNamingTheExpectedUnit) {
  const InputError e = expect_error(replaced(21, "inductance = \"10 uF\""),
                                    {ErrorKind::kWrongUnit, 21, "L1", "in H"});
  EXPECT_NE(e.problem().find("H (henry)"), std::string::npos) << e.problem();
  EXPECT_NE(e.problem().find("inductance"), std::string::npos) << e.problem();
}

TEST(CircuitFile, RejectsAUnitOnTheDutyCycle) {
  expect_error(replaced(6, "duty = \"50 %\""), {ErrorKind::kInvalidValue, 6, "pwm1", "0.3"});
  expect_error(replaced(6, "duty = \"0.5 V\""), {ErrorKind::kWrongUnit, 6, "pwm1", "plain number"});
}

TEST(CircuitFile, RejectsNegativeResistance) {
  const InputError e = expect_error(replaced(29, "resistance = \"-5 Ohm\""),
                                    {ErrorKind::kInvalidValue, 29, "R1", "resistance = "});
  EXPECT_NE(e.problem().find("greater than 0 Ohm"), std::string::npos) << e.problem();
}

TEST(CircuitFile, RejectsZeroInductance) {
  expect_error(replaced(21, "inductance = 0"),
               {ErrorKind::kInvalidValue, 21, "L1", "inductance = \"10 uH\""});
}

TEST(CircuitFile, RejectsNegativeWindingResistance) {
  expect_error(appended({"[[inductor]]", "name = \"L2\"", "nodes = [\"a\", \"b\"]",
                         "inductance = \"1 uH\"", "winding_resistance = \"-1 mOhm\""}),
               {ErrorKind::kInvalidValue, 34, "L2", "winding_resistance = "});
}

TEST(CircuitFile, RejectsASaturationCurrentWithoutSaturatedInductance) {
  expect_error(replaced(21, "inductance = \"10 uH\"\nsaturation_current = \"3 A\""),
               {ErrorKind::kMissingKey, 22, "L1", "add saturated_inductance"});
}

TEST(CircuitFile, RejectsASaturatedInductanceAboveTheInductance) {
  expect_error(replaced(21,
                        "inductance = \"10 uH\"\nsaturation_current = \"3 A\"\n"
                        "saturated_inductance = \"22 uH\""),
               {ErrorKind::kInvalidValue, 23, "L1", "below the inductance"});
}

TEST(CircuitFile, RejectsAConstantPowerLoadWithoutPositivePower) {
  expect_error(appended({"[[constant_power_load]]", "name = \"P1\"", "nodes = [\"out\", \"0\"]",
                         "power = \"-2 W\""}),
               {ErrorKind::kInvalidValue, 33, "P1", "power = \"2 W\""});
  expect_error(appended({"[[constant_power_load]]", "name = \"P1\"", "nodes = [\"out\", \"0\"]",
                         "power = \"2 A\""}),
               {ErrorKind::kWrongUnit, 33, "P1", "in W"});
}

TEST(CircuitFile, RejectsASineWithoutFrequency) {
  expect_error(replaced(10, "voltage = { kind = \"sine\", amplitude = \"5 V\" }"),
               {ErrorKind::kMissingKey, 10, "Vin", "add frequency = \"50 Hz\""});
}

TEST(CircuitFile, RejectsDutyOutsideZeroToOne) {
  const InputError e =
      expect_error(replaced(6, "duty = 1.2"), {ErrorKind::kInvalidValue, 6, "pwm1", "duty = 0.3"});
  EXPECT_NE(e.problem().find("between 0 and 1"), std::string::npos) << e.problem();
  expect_error(replaced(6, "duty = -0.1"), {ErrorKind::kInvalidValue, 6, "pwm1", "duty = 0.3"});
}

TEST(CircuitFile, RejectsZeroFrequency) {
  expect_error(replaced(5, "frequency = \"0 Hz\""),
               {ErrorKind::kInvalidValue, 5, "pwm1", "frequency = \"200 kHz\""});
}

TEST(CircuitFile, RejectsPhaseOfAWholePeriod) {
  expect_error(appended({"[[pwm]]", "name = \"pwm2\"", "frequency = \"1 kHz\"", "duty = 0.5",
                         "phase = 1.0"}),
               {ErrorKind::kInvalidValue, 34, "pwm2", "phase = 0.25"});
}

TEST(CircuitFile, RejectsNotANumberWrittenAsTomlFloat) {
  expect_error(replaced(25, "capacitance = nan"),
               {ErrorKind::kInvalidValue, 25, "C1", "finite value"});
  expect_error(replaced(25, "capacitance = inf"),
               {ErrorKind::kInvalidValue, 25, "C1", "finite value"});
}

TEST(CircuitFile, RejectsGarbageValueText) {
  expect_error(replaced(25, "capacitance = \"lots\""),
               {ErrorKind::kInvalidValue, 25, "C1", "47 uF"});
  expect_error(replaced(25, "capacitance = \"47 uF please\""),
               {ErrorKind::kInvalidValue, 25, "C1", "47 uF"});
  expect_error(replaced(25, "capacitance = true"),
               {ErrorKind::kInvalidValue, 25, "C1", "capacitance = \"47 uF\""});
}

TEST(CircuitFile, RejectsMegAsAPrefix) {
  expect_error(replaced(29, "resistance = \"1 meg\""),
               {ErrorKind::kInvalidValue, 29, "R1", "write M for mega"});
}

TEST(CircuitFile, RejectsDuplicateElementNameNamingTheFirstDefinition) {
  const InputError e = expect_error(replaced(27, "name = \"L1\""),
                                    {ErrorKind::kDuplicateName, 26, "L1", "its own name"});
  EXPECT_NE(e.problem().find("bad.toml:18:"), std::string::npos) << e.problem();
}

TEST(CircuitFile, RejectsDuplicateModulatorName) {
  expect_error(appended({"[[schedule]]", "name = \"pwm1\""}),
               {ErrorKind::kDuplicateName, 30, "pwm1", "its own name"});
}

TEST(CircuitFile, RejectsAnElementNamedLikeANode) {
  expect_error(replaced(27, "name = \"out\""),
               {ErrorKind::kDuplicateName, 26, "out", "rename the element or the node"});
}

TEST(CircuitFile, RejectsUnknownGateWithSuggestion) {
  expect_error(replaced(14, "gate = \"pwm2\""),
               {ErrorKind::kUnknownGate, 11, "S1", "did you mean 'pwm1'?"});
}

TEST(CircuitFile, TellsThatAComplementaryPwmProvidesHighAndLowGates) {
  std::string text = replaced(14, "gate = \"hb\"");
  text +=
      "[[complementary_pwm]]\nname = \"hb\"\nfrequency = \"100 kHz\"\nduty = 0.5\n"
      "dead_time = \"100 ns\"\n";
  expect_error(text, {ErrorKind::kUnknownGate, 11, "S1", "gate = \"hb.high\""});
}

TEST(CircuitFile, RejectsDeadTimeThatLeavesNoLowSideOnTime) {
  // 100 kHz: 10 us period; duty 0.9 leaves 1 us, less than two dead times of 0.6 us.
  expect_error(appended({"[[complementary_pwm]]", "name = \"hb\"", "frequency = \"100 kHz\"",
                         "duty = 0.9", "dead_time = \"0.6 us\""}),
               {ErrorKind::kInvalidValue, 34, "hb", "shorten dead_time"});
}

TEST(CircuitFile, RejectsScheduleChangesOutOfOrder) {
  expect_error(appended({"[[schedule]]", "name = \"en\"",
                         "changes = [[\"2 ms\", \"on\"], [\"1 ms\", \"off\"]]"}),
               {ErrorKind::kInvalidValue, 32, "en", "time order"});
}

TEST(CircuitFile, RejectsAScheduleStateThatIsNeitherOnNorOff) {
  expect_error(appended({"[[schedule]]", "name = \"en\"", "initial = \"high\""}),
               {ErrorKind::kInvalidValue, 32, "en", "\"on\" or \"off\""});
}

TEST(CircuitFile, RejectsTableWaveformWithDecreasingTimes) {
  expect_error(replaced(10,
                        "voltage = { kind = \"table\", points = [[\"1 ms\", \"5 V\"], "
                        "[\"0.5 ms\", \"12 V\"]] }"),
               {ErrorKind::kInvalidValue, 10, "Vin", "time order"});
}

TEST(CircuitFile, RejectsAWaveformKeyThatDoesNotBelongToItsKind) {
  expect_error(replaced(10,
                        "voltage = { kind = \"step\", time = \"1 ms\", before = 0, "
                        "after = \"12 V\", points = [] }"),
               {ErrorKind::kUnknownKey, 10, "Vin", "known keys here are: kind time before after"});
}

TEST(CircuitFile, RejectsUnknownWaveformKind) {
  expect_error(replaced(10, "voltage = { kind = \"sawtooth\" }"),
               {ErrorKind::kInvalidValue, 10, "Vin", "\"sine\" or \"rectified_sine\""});
}

TEST(CircuitFile, RejectsASingleBracketElementTable) {
  Lines lines = base_circuit();
  lines[25] = "[resistor]";
  expect_error(join(lines), {ErrorKind::kInvalidValue, 26, "", "write [[resistor]]"});
}

TEST(CircuitFile, RejectsNodesThatAreNotTwo) {
  expect_error(replaced(28, "nodes = [\"out\"]"),
               {ErrorKind::kInvalidValue, 28, "R1", "nodes = [\"in\", \"0\"]"});
}

TEST(CircuitFile, RejectsAnElementWithBothTerminalsOnOneNode) {
  expect_error(replaced(28, "nodes = [\"0\", \"gnd\"]"),
               {ErrorKind::kInvalidValue, 28, "R1", "different nodes"});
}

TEST(CircuitFile, RejectsANodeNameWithADot) {
  expect_error(replaced(28, "nodes = [\"out.v\", \"0\"]"),
               {ErrorKind::kInvalidValue, 28, "R1", "e.g. \"sw_node\""});
}

TEST(CircuitFile, RejectsUnknownSignalWithSuggestion) {
  expect_error(appended({"[record]", "signals = [\"L1.i\", \"L2.i\"]"}),
               {ErrorKind::kInvalidOption, 31, "", "did you mean 'L1.i'?"});
}

TEST(CircuitFile, RejectsTheCurrentOfANode) {
  expect_error(appended({"[record]", "signals = [\"out.i\"]"}),
               {ErrorKind::kInvalidOption, 31, "", "element's current"});
}

TEST(CircuitFile, RejectsASignalWithoutQuantity) {
  expect_error(appended({"[run]", "output_signal = \"out\""}),
               {ErrorKind::kInvalidOption, 31, "", "\"out.v\""});
}

TEST(CircuitFile, RejectsRunOptionOutOfRange) {
  expect_error(appended({"[run]", "periods = 0"}),
               {ErrorKind::kInvalidOption, 31, "", "periods = "});
  expect_error(appended({"[run]", "settling_band = 1.5"}),
               {ErrorKind::kInvalidOption, 31, "", "settling_band = 0.02"});
  expect_error(appended({"[run]", "periods = \"2000\""}),
               {ErrorKind::kInvalidOption, 31, "", "no quotes"});
}

TEST(CircuitFile, RejectsAWindowThatEndsBeforeItStarts) {
  expect_error(appended({"[record]", "windows = [[\"2 ms\", \"1 ms\"]]"}),
               {ErrorKind::kInvalidOption, 31, "", "end later than start"});
}

TEST(CircuitFile, RejectsAWindowAfterTheEndOfTheRun) {
  // 100 kHz for 100 periods: the run ends at 1 ms.
  expect_error(appended({"[run]", "periods = 100", "[record]", "windows = [[\"2 ms\", \"3 ms\"]]"}),
               {ErrorKind::kInvalidOption, 33, "", "raise [run] periods"});
}

TEST(CircuitFile, RejectsACircuitWithNothingToSetTheSwitchingPeriod) {
  const std::string text =
      "[[voltage_source]]\nname = \"V\"\nnodes = [\"a\", \"0\"]\nvoltage = 1\n"
      "[[resistor]]\nname = \"R\"\nnodes = [\"a\", \"0\"]\nresistance = 1\n"
      "[run]\nperiods = 10\n";
  expect_error(text, {ErrorKind::kInvalidOption, 9, "", "switching_period = "});
}

TEST(CircuitFile, RejectsAFileWithoutElements) {
  expect_error("[circuit]\nname = \"empty\"\n", {ErrorKind::kMissingKey, 1, "", "[[resistor]]"});
  expect_error("", {ErrorKind::kMissingKey, 1, "", "[[inductor]]"});
}

// Random edits of the example files (delete, duplicate or replace a character, drop or repeat a
// line) must give a loaded file or an InputError, never a crash or another exception. The seed
// comes from PULSEWISE_TEST_SEED when set and is printed.
TEST(CircuitFile, ThrowsOnlyInputErrorsForRandomlyDamagedFiles) {
  const char* env = std::getenv("PULSEWISE_TEST_SEED");
  const unsigned seed = env ? static_cast<unsigned>(std::strtoul(env, nullptr, 10)) : 20240611u;
  std::cout << "PULSEWISE_TEST_SEED=" << seed << "\n";
  std::mt19937 rng(seed);
  const std::string alphabet = "[]{}=\",.#0123456789 \nabcxyzuHFVAs-e";
  int rejected = 0;
  int accepted = 0;
  for (const char* name : kExampleFiles) {
    std::ifstream in(std::string(PULSEWISE_SOURCE_DIR) + "/data/" + name);
    std::stringstream buffer;
    buffer << in.rdbuf();
    const std::string original = buffer.str();
    for (int trial = 0; trial < 300; ++trial) {
      std::string text = original;
      const int edits = 1 + static_cast<int>(rng() % 3);
      for (int k = 0; k < edits && !text.empty(); ++k) {
        const std::size_t at = rng() % text.size();
        switch (rng() % 4) {
          case 0: text.erase(at, 1); break;
          case 1: text.insert(at, 1, text[at]); break;
          case 2: text[at] = alphabet[rng() % alphabet.size()]; break;
          default: {
            const std::size_t begin = text.rfind('\n', at);
            const std::size_t end = text.find('\n', at);
            const std::size_t b = begin == std::string::npos ? 0 : begin + 1;
            const std::string line = text.substr(b, end == std::string::npos ? end : end - b);
            text.insert(b, line + "\n");
          }
        }
      }
      try {
        parse_circuit_text(text, name);
        ++accepted;
      } catch (const InputError& e) {
        ++rejected;
        EXPECT_EQ(e.where().file, name) << e.what();
        EXPECT_FALSE(e.fix().empty()) << e.what();
      } catch (const std::exception& e) {
        ADD_FAILURE() << "not an InputError: " << e.what() << "\n" << text;
      }
    }
  }
  std::cout << accepted << " damaged files still loaded, " << rejected << " were rejected\n";
  EXPECT_GT(rejected, 0);
}

TEST(CircuitFile, RejectsAFileThatDoesNotExistNamingThePath) {
  const std::string path = (fs::temp_directory_path() / "pulsewise-no-such-file.toml").string();
  try {
    load_circuit_file(path);
    FAIL() << "no exception";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, path);
    EXPECT_EQ(std::string(e.what()).rfind(path + ": ", 0), 0u) << e.what();
    EXPECT_NE(e.fix().find("check the path"), std::string::npos);
  }
}

TEST(CircuitFile, RejectsADirectoryNamingThePath) {
  const std::string path = fs::temp_directory_path().string();
  EXPECT_THROW(load_circuit_file(path), InputError);
}

TEST(CircuitFile, ResolvesARelativeTraceFileBesideTheCircuitFile) {
  const fs::path dir = fs::temp_directory_path() / "pulsewise-circuit-file-test";
  fs::create_directories(dir);
  const fs::path path = dir / "c.toml";
  {
    std::ofstream out(path);
    out << appended({"[record]", "file = \"out/trace.h5\""});
  }
  const CircuitFile f = load_circuit_file(path.string());
  EXPECT_EQ(fs::path(f.recording.output_path), (dir / "out" / "trace.h5").lexically_normal());
  EXPECT_EQ(f.path, path.string());
  fs::remove_all(dir);
}

// --- the example circuits in data/ ------------------------------------------------------------

TEST(CircuitFile, LoadsEveryExampleCircuit) {
  for (const char* name : kExampleFiles) {
    SCOPED_TRACE(name);
    const std::string path = std::string(PULSEWISE_SOURCE_DIR) + "/data/" + name;
    const CircuitFile f = load_circuit_file(path);
    EXPECT_FALSE(f.circuit.name().empty());
    EXPECT_FALSE(f.description.empty());
    EXPECT_GT(f.circuit.first_modulator_period_s(), 0.0);
    EXPECT_FALSE(f.simulation.output_signal.empty());
    EXPECT_FALSE(f.simulation.recorded_signals.empty());
    // A demo should be quick: a few thousand periods at most.
    EXPECT_LE(f.simulation.periods, 5000);
  }
}

// The core's structural checks (floating nodes, voltage loops, current cutsets, gate names) run
// when a Simulation is made; an example that fails them would not run in the demo.
TEST(CircuitFile, EveryExampleCircuitPassesTheCoreStructuralChecks) {
  for (const char* name : kExampleFiles) {
    SCOPED_TRACE(name);
    const CircuitFile f = load_circuit_file(std::string(PULSEWISE_SOURCE_DIR) + "/data/" + name);
    EXPECT_NO_THROW(Simulation(f.circuit, f.simulation));
  }
}

std::vector<std::string> complete_examples_in(const std::string& path) {
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  const std::string doc = text.str();
  std::vector<std::string> out;
  const std::regex block("```toml\n([^`]*)```");
  for (auto it = std::sregex_iterator(doc.begin(), doc.end(), block); it != std::sregex_iterator();
       ++it) {
    const std::string body = (*it)[1].str();
    if (body.find("[circuit]") != std::string::npos) out.push_back(body);
  }
  return out;
}

TEST(CircuitFile, TheCompleteExampleOfTheDocumentationLoadsAndPassesTheCoreChecks) {
  const auto examples =
      complete_examples_in(std::string(PULSEWISE_SOURCE_DIR) + "/docs/circuit-file.md");
  ASSERT_FALSE(examples.empty());
  for (const auto& text : examples) {
    const CircuitFile f = parse_circuit_text(text, "docs/circuit-file.md");
    EXPECT_EQ(f.circuit.elements().size(), 11u);
    EXPECT_NO_THROW(Simulation(f.circuit, f.simulation));
  }
}

TEST(CircuitFile, ReadsTheSensorNodeBoostValuesAsWritten) {
  const CircuitFile f =
      load_circuit_file(std::string(PULSEWISE_SOURCE_DIR) + "/data/sensor-node-boost.toml");
  const Circuit& c = f.circuit;
  // Values as written in data/sensor-node-boost.toml.
  EXPECT_EQ(c.elements()[c.find_element("L1")].value, 22e-6);
  EXPECT_EQ(c.elements()[c.find_element("Rload")].value, 250.0);
  EXPECT_EQ(c.elements()[c.find_element("Cout")].value, 22e-6);
  ASSERT_EQ(c.pwm_modulators().size(), 1u);
  EXPECT_EQ(c.pwm_modulators()[0].frequency_hz, 100e3);
}

}  // namespace
}  // namespace pulsewise

namespace {

using namespace pulsewise;

TEST(CircuitFile, RunReadsTheOdeStepperAndItsTolerances) {
  const CircuitFile f = parse_circuit_text(
      appended({"[run]", "ode_stepper = \"stiff\"", "ode_relative_tolerance = 1e-8",
                "ode_absolute_tolerance = 1e-9"}),
      "ode.toml");
  EXPECT_EQ(f.simulation.ode_stepper, OdeStepper::kStiff);
  EXPECT_EQ(f.simulation.ode_relative_tolerance, 1e-8);
  EXPECT_EQ(f.simulation.ode_absolute_tolerance, 1e-9);
  EXPECT_EQ(parse_circuit_text(join(base_circuit()), "base.toml").simulation.ode_stepper,
            OdeStepper::kAuto);
}

TEST(CircuitFile, RejectsAnUnknownOdeStepperNamingTheChoices) {
  // Line 31: the base circuit has 29 lines, then "[run]".
  expect_error(appended({"[run]", "ode_stepper = \"implicit\""}),
               {ErrorKind::kInvalidOption, 31, "", "\"auto\", \"explicit\" or \"stiff\""});
}

}  // namespace
