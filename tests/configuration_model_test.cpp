// Configuration model: the state-space matrices of a configuration against hand derivations from
// Kirchhoff's laws, including the exact treatment of open devices.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "pulsewise/pulsewise.hpp"

namespace {

using namespace pulsewise;
constexpr double kEps = std::numeric_limits<double>::epsilon();

// Relative difference scaled by the larger magnitude (or 1 for values near zero).
double rel(double a, double b) {
  return std::abs(a - b) / std::max({std::abs(a), std::abs(b), 1.0});
}

TEST(ConfigurationModel, SeriesRlcMatchesKirchhoffVoltageLaw) {
  // V - R - L - C to ground: L di/dt = V - R i - v_C, C dv_C/dt = i (KVL and the element laws;
  // e.g. C. K. Alexander and M. N. O. Sadiku, Fundamentals of Electric Circuits, ch. 8).
  const double R = 2.0, L = 1e-3, C = 1e-6;
  Circuit c;
  c.add_voltage_source("V1", "a", "0", Waveform::constant(5.0))
      .add_resistor("R1", "a", "b", R)
      .add_inductor("L1", "b", "c", L)
      .add_capacitor("C1", "c", "0", C);
  CircuitModel model(c);
  const ConfigurationModel& cfg = model.configuration(0);
  ASSERT_TRUE(cfg.valid) << cfg.problem;
  ASSERT_EQ(model.state_count(), 2u);
  EXPECT_LT(rel(cfg.A(0, 0), -R / L), 8 * kEps);
  EXPECT_LT(rel(cfg.A(0, 1), -1 / L), 8 * kEps);
  EXPECT_LT(rel(cfg.A(1, 0), 1 / C), 8 * kEps);
  EXPECT_LT(rel(cfg.A(1, 1), 0.0), 8 * kEps);
  EXPECT_LT(rel(cfg.B(0, 0), 1 / L), 8 * kEps);
  EXPECT_LT(rel(cfg.B(1, 0), 0.0), 8 * kEps);
  // The source delivers the loop current: V1.i = i_L (source convention).
  const int source_current = model.find_signal("V1.i");
  EXPECT_LT(rel(cfg.C(source_current, 0), 1.0), 8 * kEps);
}

Circuit boost() {
  PwmModulator m;
  m.name = "pwm";
  m.frequency_hz = 100e3;
  m.duty_cycle = 0.4;
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(12.0))
      .add_inductor("L1", "in", "sw", 22e-6, InductorOptions{0.05, 0.0})
      .add_switch("S1", "sw", "0", "pwm")
      .add_diode("D1", "sw", "out", DiodeOptions{0.0, 0.4, kOpen})
      .add_capacitor("C1", "out", "0", 100e-6)
      .add_resistor("Rload", "out", "0", 30.0)
      .add_modulator(m);
  return c;
}

TEST(ConfigurationModel, OpenDevicesFreezeTheInductorCurrentExactly) {
  // Both devices open: node sw floats, joined to the rest only through L1. Its potential keeps
  // dI/dt = 0, so L1's row of A and B is exactly zero (no leakage), and v(sw) = Vin - R_L i.
  CircuitModel model(boost());
  const ConfigurationModel& cfg = model.configuration(0);
  ASSERT_TRUE(cfg.valid) << cfg.problem;
  ASSERT_EQ(cfg.floating_groups.size(), 1u);
  EXPECT_EQ(cfg.floating_groups[0].nodes.front(), "sw");
  EXPECT_EQ(cfg.A.row(0).cwiseAbs().maxCoeff(), 0.0);
  EXPECT_EQ(cfg.B.row(0).cwiseAbs().maxCoeff(), 0.0);
  const int v_sw = model.find_signal("sw.v");
  EXPECT_LT(rel(cfg.D(v_sw, 0), 1.0), 8 * kEps);    // + Vin
  EXPECT_LT(rel(cfg.C(v_sw, 0), -0.05), 8 * kEps);  // - R_L i_L
  // The diode sees v(sw) - v(out): its reverse voltage is defined, not arbitrary.
  const int v_d = model.find_signal("D1.v");
  EXPECT_LT(rel(cfg.C(v_d, 1), -1.0), 8 * kEps);
}

TEST(ConfigurationModel, DiodeForwardDropEntersThroughTheUnitInput) {
  // Diode on (zero resistance): v(sw) = v(out) + V_F, so L di/dt = Vin - R_L i - v_out - V_F.
  CircuitModel model(boost());
  const DevicePattern diode_on = 0b10;  // bit 0: S1, bit 1: D1
  const ConfigurationModel& cfg = model.configuration(diode_on);
  ASSERT_TRUE(cfg.valid) << cfg.problem;
  const double L = 22e-6;
  EXPECT_LT(rel(cfg.B(0, 1) * L, -0.4), 16 * kEps);
  EXPECT_LT(rel(cfg.A(0, 1) * L, -1.0), 16 * kEps);
  EXPECT_LT(rel(cfg.A(0, 0) * L, -0.05), 16 * kEps);
}

TEST(ConfigurationModel, SepicIdleIntervalCouplesBothInductors) {
  // SEPIC with switch and diode open: nodes a and b (joined by C1) float with cutset {L1, L2}.
  // KCL forces i1 = i2 through C1, and KVL around Vin-L1-C1-L2 gives
  // (L1 + L2) di/dt = Vin - v_C1 for both inductors (hand derivation from Kirchhoff's laws).
  const double L1 = 33e-6, L2 = 15e-6;
  PwmModulator m;
  m.name = "pwm";
  m.frequency_hz = 100e3;
  m.duty_cycle = 0.4;
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(24.0))
      .add_inductor("L1", "in", "a", L1)
      .add_switch("S1", "a", "0", "pwm")
      .add_capacitor("C1", "a", "b", 10e-6)
      .add_inductor("L2", "b", "0", L2)
      .add_diode("D1", "b", "out")
      .add_capacitor("C2", "out", "0", 47e-6)
      .add_resistor("Rload", "out", "0", 20.0)
      .add_modulator(m);
  CircuitModel model(c);
  const ConfigurationModel& cfg = model.configuration(0);
  ASSERT_TRUE(cfg.valid) << cfg.problem;
  ASSERT_EQ(cfg.floating_groups.size(), 1u);
  EXPECT_EQ(cfg.floating_groups[0].cutset_inductors.size(), 2u);
  // States: L1, L2, C1, C2. Inputs: Vin, 1.
  const double sum = L1 + L2;
  EXPECT_LT(rel(cfg.B(0, 0) * sum, 1.0), 16 * kEps);
  EXPECT_LT(rel(cfg.A(0, 2) * sum, -1.0), 16 * kEps);
  // L2's current is taken b -> 0: it is the same loop current, so its derivative is the same.
  EXPECT_LT(rel(cfg.B(1, 0) * sum, 1.0), 16 * kEps);
  EXPECT_LT(rel(cfg.A(1, 2) * sum, -1.0), 16 * kEps);
}

TEST(ConfigurationModel, ReportsAZeroResistanceLoopOfOnDevices) {
  // Switch and diode both on with zero resistance short the output capacitor.
  Circuit c = boost();
  CircuitModel model(c);
  const ConfigurationModel& cfg = model.configuration(0b11);
  EXPECT_FALSE(cfg.valid);
  EXPECT_NE(cfg.problem.find("S1"), std::string::npos) << cfg.problem;
  EXPECT_NE(cfg.problem.find("D1"), std::string::npos) << cfg.problem;
  EXPECT_NE(cfg.problem.find("C1"), std::string::npos) << cfg.problem;
}

TEST(ConfigurationModel, CachesEachPatternOnce) {
  CircuitModel model(boost());
  model.configuration(1);
  model.configuration(1);
  model.configuration(2);
  EXPECT_EQ(model.configurations_built(), 2u);
  EXPECT_EQ(model.cache_hits(), 1u);
}

}  // namespace
