// Gate timing of the modulators: edges at the exact instants the definitions in modulator.hpp
// give (trailing-edge PWM, complementary pair with dead time, soft start, schedules).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "detail/gate_bank.hpp"
#include "pulsewise/pulsewise.hpp"

namespace {

using namespace pulsewise;
using detail::GateBank;

constexpr double kT = 10e-6;  // 100 kHz

Circuit two_switches(const std::string& gate_a, const std::string& gate_b) {
  Circuit c;
  c.add_voltage_source("V1", "a", "0", Waveform::constant(1.0))
      .add_switch("Sa", "a", "b", gate_a)
      .add_switch("Sb", "b", "0", gate_b)
      .add_resistor("R1", "b", "0", 1.0);
  return c;
}

std::vector<int> devices_of(const Circuit& c) {
  std::vector<int> d;
  for (std::size_t k = 0; k < c.elements().size(); ++k)
    if (c.elements()[k].is_device()) d.push_back(static_cast<int>(k));
  return d;
}

std::vector<double> edges(const GateBank& bank, double t_end) {
  std::vector<double> out;
  for (double t = bank.next_edge_after(0.0); t < t_end; t = bank.next_edge_after(t))
    out.push_back(t);
  return out;
}

TEST(Modulator, PwmTurnsOnAtPeriodStartAndOffAfterDutyTimesPeriod) {
  Circuit c = two_switches("p", "p");
  PwmModulator m;
  m.name = "p";
  m.frequency_hz = 1 / kT;
  m.duty_cycle = 0.3;
  c.add_modulator(m);
  GateBank bank(c, devices_of(c), 1e-12 * kT);
  EXPECT_EQ(bank.switch_pattern(0.0), 0b11u);
  EXPECT_EQ(bank.switch_pattern(0.31 * kT), 0u);
  const auto e = edges(bank, 2.5 * kT);
  ASSERT_GE(e.size(), 3u);
  EXPECT_NEAR(e[0], 0.3 * kT, 1e-15 * kT);
  EXPECT_NEAR(e[1], 1.0 * kT, 1e-15 * kT);
  EXPECT_NEAR(e[2], 1.3 * kT, 1e-15 * kT);
}

TEST(Modulator, PhaseShiftDelaysThePeriodStart) {
  Circuit c = two_switches("p0", "p1");
  for (const char* name : {"p0", "p1"}) {
    PwmModulator m;
    m.name = name;
    m.frequency_hz = 1 / kT;
    m.duty_cycle = 0.25;
    m.phase = m.name == "p1" ? 0.5 : 0.0;  // interleaved by half a period
    c.add_modulator(m);
  }
  GateBank bank(c, devices_of(c), 1e-12 * kT);
  EXPECT_EQ(bank.switch_pattern(0.1 * kT), 0b01u);
  EXPECT_EQ(bank.switch_pattern(0.6 * kT), 0b10u);
  EXPECT_EQ(bank.switch_pattern(0.8 * kT), 0u);
}

TEST(Modulator, ComplementaryPairLeavesBothOffDuringEachDeadTime) {
  Circuit c = two_switches("hb.high", "hb.low");
  ComplementaryPwm m;
  m.name = "hb";
  m.frequency_hz = 1 / kT;
  m.duty_cycle = 0.4;
  m.dead_time_s = 0.05 * kT;
  c.add_modulator(m);
  GateBank bank(c, devices_of(c), 1e-12 * kT);
  EXPECT_EQ(bank.switch_pattern(0.2 * kT), 0b01u);  // high on
  EXPECT_EQ(bank.switch_pattern(0.42 * kT), 0u);    // first dead time
  EXPECT_EQ(bank.switch_pattern(0.7 * kT), 0b10u);  // low on
  EXPECT_EQ(bank.switch_pattern(0.97 * kT), 0u);    // second dead time
  const auto e = edges(bank, kT * 1.01);
  ASSERT_EQ(e.size(), 4u);
  EXPECT_NEAR(e[0], 0.40 * kT, 1e-15 * kT);
  EXPECT_NEAR(e[1], 0.45 * kT, 1e-15 * kT);
  EXPECT_NEAR(e[2], 0.95 * kT, 1e-15 * kT);
  EXPECT_NEAR(e[3], 1.00 * kT, 1e-15 * kT);
}

TEST(Modulator, SoftStartRampsTheDutyLinearlyOverTheGivenPeriods) {
  Circuit c = two_switches("p", "p");
  PwmModulator m;
  m.name = "p";
  m.frequency_hz = 1 / kT;
  m.duty_cycle = 0.5;
  m.soft_start = SoftStart{0.1, 4};  // 0.1, 0.2, 0.3, 0.4, then 0.5
  c.add_modulator(m);
  GateBank bank(c, devices_of(c), 1e-12 * kT);
  for (int k = 0; k < 7; ++k) {
    const double expected = 0.1 + 0.4 * std::min(k, 4) / 4.0;
    const double off = bank.next_edge_after(k * kT);
    EXPECT_NEAR(off - k * kT, expected * kT, 1e-14 * kT) << "period " << k;
  }
}

TEST(Modulator, ScheduleFollowsTheListedChanges) {
  Circuit c = two_switches("load", "load");
  GateSchedule s;
  s.name = "load";
  s.initial_on = false;
  s.changes = {{1e-3, true}, {2e-3, false}};
  c.add_modulator(s);
  GateBank bank(c, devices_of(c), 1e-15);
  EXPECT_EQ(bank.switch_pattern(0.5e-3), 0u);
  EXPECT_EQ(bank.switch_pattern(1.5e-3), 0b11u);
  EXPECT_EQ(bank.switch_pattern(2.5e-3), 0u);
  EXPECT_DOUBLE_EQ(bank.next_edge_after(0.0), 1e-3);
  EXPECT_DOUBLE_EQ(bank.next_edge_after(1e-3), 2e-3);
}

TEST(Modulator, FullDutyKeepsTheGateOnWithoutEdgesInsideThePeriod) {
  Circuit c = two_switches("p", "p");
  PwmModulator m;
  m.name = "p";
  m.frequency_hz = 1 / kT;
  m.duty_cycle = 1.0;
  c.add_modulator(m);
  GateBank bank(c, devices_of(c), 1e-12 * kT);
  EXPECT_EQ(bank.switch_pattern(0.999 * kT), 0b11u);
  EXPECT_GE(bank.next_edge_after(0.0), kT * (1 - 1e-12));
}

// A complementary pair with dead time and a soft start, and a phase-shifted PWM whose
// on-interval wraps across the run period boundary (invented test values).
Circuit pair_and_shifted_pwm() {
  Circuit c;
  c.add_voltage_source("V1", "a", "0", Waveform::constant(1.0))
      .add_switch("Sa", "a", "b", "p.high")
      .add_switch("Sb", "b", "0", "p.low")
      .add_switch("Sc", "a", "d", "q")
      .add_resistor("R1", "b", "0", 1.0)
      .add_resistor("R2", "d", "0", 1.0);
  ComplementaryPwm pair;
  pair.name = "p";
  pair.frequency_hz = 1 / kT;
  pair.duty_cycle = 0.4;
  pair.dead_time_s = 0.03 * kT;
  pair.soft_start = SoftStart{0.1, 3};
  c.add_modulator(pair);
  PwmModulator shifted;
  shifted.name = "q";
  shifted.frequency_hz = 1 / kT;
  shifted.duty_cycle = 0.35;
  shifted.phase = 0.8;  // its on-interval wraps across the run period boundary
  c.add_modulator(shifted);
  return c;
}

}  // namespace

// The cycle loop reuses one period's edge offsets once the gates repeat (gate_bank.hpp). The
// reused offsets must be the instants the definitions give, in every period, including the ones
// a phase shift pulls in from the gate period before and the ones after a soft start ramp.
TEST(Modulator, ReusedPeriodOffsetsMatchTheDirectEdgeSearchInEveryPeriod) {
  const Circuit c = pair_and_shifted_pwm();
  GateBank bank(c, devices_of(c), 1e-12 * kT, kT);
  // Offsets of the edges inside one period, from whichever search `next` stands for.
  auto offsets = [](auto next) {
    std::vector<double> out;
    for (double tau = 0.0;;) {
      const double e = next(tau);
      if (!(e < kT * (1 - 1e-9))) return out;
      out.push_back(e);
      tau = e;
    }
  };
  int compared = 0;
  for (long k = 0; k < 12; ++k) {
    const long double origin = static_cast<long double>(k) * kT;
    const auto a = offsets([&](double tau) { return bank.next_edge_in_period(k, origin, tau); });
    const auto b = offsets([&](double tau) { return bank.next_edge_after(origin, tau); });
    ASSERT_EQ(a.size(), b.size()) << "period " << k;
    for (std::size_t i = 0; i < a.size(); ++i, ++compared)
      EXPECT_NEAR(a[i], b[i], 1e-15 * kT) << "period " << k << ", edge " << i;
  }
  // 5 edges inside each period: the pair's high-side off, low-side on and low-side off (its
  // high-side on is the period start itself), and q's off at 0.15 T and on at 0.8 T.
  EXPECT_EQ(compared, 12 * 5);
}

// The patterns reused at the offsets of a periodic period (switch_pattern_in_period) must be
// the ones the gate definitions give at those instants, in every period after the soft start,
// including the period end (the next period's start).
TEST(Modulator, ReusedPatternsMatchTheGateDefinitionsInEveryPeriod) {
  const Circuit c = pair_and_shifted_pwm();
  GateBank bank(c, devices_of(c), 1e-12 * kT, kT);
  std::vector<DevicePattern> seen;
  for (long k = 0; k < 12; ++k) {
    const long double origin = static_cast<long double>(k) * kT;
    for (double tau = 0.0;;) {
      const double e = std::min(bank.next_edge_in_period(k, origin, tau), kT);
      const DevicePattern direct = bank.switch_pattern(static_cast<double>(origin + e));
      EXPECT_EQ(bank.switch_pattern_in_period(k, origin, e), direct)
          << "period " << k << ", offset " << e / kT << " T";
      if (std::find(seen.begin(), seen.end(), direct) == seen.end()) seen.push_back(direct);
      if (e == kT) break;
      tau = e;
    }
  }
  // The comparison is not vacuous: the pair and q pass through several patterns per period.
  EXPECT_GE(seen.size(), 4u);
}
