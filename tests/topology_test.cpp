// Structural checks: every error names the elements involved and says what to change.
#include <gtest/gtest.h>

#include <algorithm>

#include "pulsewise/pulsewise.hpp"
#include "test_circuits.hpp"

namespace {

using namespace pulsewise;

PwmModulator pwm(const std::string& name, double frequency_hz, double duty) {
  return test::pwm(frequency_hz, duty, name);
}

// A valid boost converter that the tests break one way at a time.
Circuit boost() { return test::dcm_boost(); }

InputError expect_error(const Circuit& c) {
  try {
    check_circuit(c);
  } catch (const InputError& e) {
    return e;
  }
  ADD_FAILURE() << "no error raised";
  return InputError(ErrorKind::kInvalidValue, "", "", "");
}

bool involves(const InputError& e, const std::string& name) {
  const auto& v = e.elements_involved();
  return std::find(v.begin(), v.end(), name) != v.end();
}

TEST(Topology, AcceptsAValidBoost) { EXPECT_NO_THROW(check_circuit(boost())); }

TEST(Topology, RejectsDuplicateElementNames) {
  Circuit c = boost();
  c.add_resistor("Rload", "out", "0", 10.0);
  const InputError e = expect_error(c);
  EXPECT_EQ(e.kind(), ErrorKind::kDuplicateName);
  EXPECT_EQ(e.element(), "Rload");
}

TEST(Topology, RejectsAnElementNamedLikeANode) {
  Circuit c = boost();
  c.add_resistor("out", "out", "0", 10.0);
  EXPECT_EQ(expect_error(c).kind(), ErrorKind::kDuplicateName);
}

TEST(Topology, RejectsANodeWithASingleConnectionAndNamesTheElement) {
  Circuit c = boost();
  c.add_resistor("Rdangling", "out", "nowhere", 10.0);
  const InputError e = expect_error(c);
  EXPECT_EQ(e.kind(), ErrorKind::kFloatingNode);
  EXPECT_EQ(e.element(), "Rdangling");
  EXPECT_NE(std::string(e.what()).find("nowhere"), std::string::npos) << e.what();
}

TEST(Topology, RejectsAnIslandNotConnectedToGround) {
  Circuit c = boost();
  c.add_resistor("Ra", "x", "y", 10.0).add_resistor("Rb", "y", "x", 20.0);
  const InputError e = expect_error(c);
  EXPECT_EQ(e.kind(), ErrorKind::kFloatingNode);
  EXPECT_TRUE(involves(e, "Ra") && involves(e, "Rb")) << e.what();
}

TEST(Topology, RejectsALoopOfVoltageSourcesAndCapacitorsNamingEveryMember) {
  Circuit c = boost();
  c.add_capacitor("Cin", "in", "0", 10e-6);  // ideal capacitor across an ideal source
  const InputError e = expect_error(c);
  EXPECT_EQ(e.kind(), ErrorKind::kVoltageLoop);
  EXPECT_TRUE(involves(e, "Cin") && involves(e, "Vin")) << e.what();
  EXPECT_NE(std::string(e.what()).find("series resistance"), std::string::npos) << e.what();
}

TEST(Topology, AcceptsACapacitorWithEsrAcrossAVoltageSource) {
  Circuit c = boost();
  c.add_capacitor("Cin", "in", "0", 10e-6, CapacitorOptions{5e-3, 12.0});
  EXPECT_NO_THROW(check_circuit(c));
}

TEST(Topology, RejectsACutsetOfInductorsAndCurrentSourcesNamingEveryMember) {
  Circuit c;
  c.add_voltage_source("V1", "a", "0", Waveform::constant(1.0))
      .add_inductor("La", "a", "mid", 1e-6)
      .add_current_source("Ibias", "0", "mid", Waveform::constant(1.0))
      .add_resistor("R1", "a", "0", 1.0);
  const InputError e = expect_error(c);
  EXPECT_EQ(e.kind(), ErrorKind::kCurrentCutset);
  EXPECT_TRUE(involves(e, "La") && involves(e, "Ibias")) << e.what();
}

TEST(Topology, RejectsNonPositiveInductanceWithTheFix) {
  Circuit c = boost();
  Circuit bad;
  for (const Element& e : c.elements()) {
    if (e.name == "L1")
      bad.add_inductor("L1", e.node_a, e.node_b, -1e-6);
    else if (e.kind == ElementKind::kVoltageSource)
      bad.add_voltage_source(e.name, e.node_a, e.node_b, e.waveform);
    else if (e.kind == ElementKind::kSwitch)
      bad.add_switch(e.name, e.node_a, e.node_b, e.gate);
    else if (e.kind == ElementKind::kDiode)
      bad.add_diode(e.name, e.node_a, e.node_b);
    else if (e.kind == ElementKind::kCapacitor)
      bad.add_capacitor(e.name, e.node_a, e.node_b, e.value);
    else
      bad.add_resistor(e.name, e.node_a, e.node_b, e.value);
  }
  bad.add_modulator(pwm("pwm", 200e3, 0.3));
  const InputError e = expect_error(bad);
  EXPECT_EQ(e.kind(), ErrorKind::kInvalidValue);
  EXPECT_EQ(e.element(), "L1");
  EXPECT_NE(std::string(e.what()).find("positive"), std::string::npos) << e.what();
}

TEST(Topology, RejectsNonFiniteResistance) {
  Circuit c = boost();
  c.add_resistor("Rnan", "out", "0", std::nan(""));
  EXPECT_EQ(expect_error(c).element(), "Rnan");
}

TEST(Topology, RejectsASwitchWhoseGateNoModulatorProvides) {
  Circuit c = boost();
  c.add_switch("S2", "out", "0", "pwm2");
  const InputError e = expect_error(c);
  EXPECT_EQ(e.kind(), ErrorKind::kUnknownGate);
  EXPECT_EQ(e.element(), "S2");
  EXPECT_NE(std::string(e.what()).find("pwm2"), std::string::npos);
}

TEST(Topology, RejectsADutyCycleOutsideZeroToOne) {
  Circuit c = boost();
  c.add_modulator(pwm("bad", 100e3, 1.5));
  const InputError e = expect_error(c);
  EXPECT_EQ(e.element(), "bad");
  EXPECT_EQ(e.kind(), ErrorKind::kInvalidValue);
}

TEST(Topology, RejectsADeadTimeLongerThanHalfThePeriod) {
  Circuit c = boost();
  ComplementaryPwm m;
  m.name = "hb";
  m.frequency_hz = 1e6;
  m.duty_cycle = 0.5;
  m.dead_time_s = 600e-9;
  c.add_modulator(m);
  EXPECT_EQ(expect_error(c).element(), "hb");
}

TEST(Topology, MessageCarriesFileLineAndColumnWhenKnown) {
  Circuit c = boost();
  c.add_resistor("Rbad", "out", "0", 0.0, SourceLocation{"supply.toml", 12, 3});
  const InputError e = expect_error(c);
  EXPECT_EQ(std::string(e.what()).rfind("supply.toml:12:3: element 'Rbad': ", 0), 0u) << e.what();
}

}  // namespace
