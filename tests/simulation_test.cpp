// The cycle loop: options, end states, observer contract and per-cycle bookkeeping.
#include <gtest/gtest.h>

#include <cmath>

#include "pulsewise/pulsewise.hpp"
#include "test_circuits.hpp"

namespace {

using namespace pulsewise;

using test::dcm_boost;
using test::pwm;

TEST(SimulationOptions, DefaultsValidate) {
  EXPECT_NO_THROW(SimulationOptions{}.validate());
  EXPECT_NO_THROW(RecordingOptions{}.validate());
}

TEST(SimulationOptions, RejectsZeroPeriodsNamingTheOption) {
  SimulationOptions o;
  o.periods = 0;
  try {
    o.validate();
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.kind(), ErrorKind::kInvalidOption);
    EXPECT_NE(std::string(e.what()).find("periods"), std::string::npos);
  }
}

TEST(Simulation, UnknownRecordedSignalIsAnInputErrorThatShowsTheNaming) {
  SimulationOptions o;
  o.recorded_signals = {"vout"};
  try {
    Simulation sim(dcm_boost(), o);
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("'vout'"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find(".v"), std::string::npos) << e.what();
  }
}

TEST(Simulation, SwitchOpeningAnInductorWithoutFreewheelingPathStopsTheRun) {
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(12.0))
      .add_inductor("L1", "in", "sw", 10e-6)
      .add_switch("S1", "sw", "0", "pwm", SwitchOptions{10e-3, kOpen})
      .add_resistor("Rbleed", "in", "0", 100.0)
      .add_modulator(pwm(100e3, 0.5));
  SimulationOptions o;
  o.periods = 3;
  Simulation sim(c, o);
  const RunSummary s = sim.run();
  EXPECT_EQ(s.end, RunEnd::kInterruptedCurrent);
  EXPECT_NE(s.message.find("'S1'"), std::string::npos) << s.message;
  EXPECT_NE(s.message.find("'L1'"), std::string::npos) << s.message;
  EXPECT_NE(s.message.find("freewheeling"), std::string::npos) << s.message;
  // The interrupted current is Vin D T / L = 12 * 5e-6 / 10e-6 = 6 A (less the small R drop).
  EXPECT_NE(s.message.find(" 5.9"), std::string::npos) << s.message;
}

TEST(Simulation, DcmIdleIntervalHoldsTheInductorCurrentAtZero) {
  SimulationOptions o;
  o.periods = 300;
  o.recorded_signals = {"L1.i", "out.v"};
  Simulation sim(dcm_boost(), o);
  const RunSummary s = sim.run();
  ASSERT_TRUE(s.ok()) << s.message;
  EXPECT_EQ(s.last_cycle.mode, ConductionMode::kDcm);
  ASSERT_EQ(s.last_cycle.intervals.size(), 3u);
  // Idle: inductor current is frozen where the diode turned off (zero), no leakage path.
  const SignalStats& il = s.last_cycle.signals[0];
  EXPECT_LT(std::abs(il.min), 1e-11 * il.max) << "min " << il.min << " max " << il.max;
  // Each period starts from zero current, so the on-interval is an RL charge through the switch:
  // i(D T) = (Vin / r) (1 - exp(-r D T / L)) (first-order RL step response, e.g. Alexander and
  // Sadiku, Fundamentals of Electric Circuits, ch. 7). Exact up to rounding: 1e-12 relative.
  const double r = 10e-3, L = 10e-6, on_time = 0.3 * 5e-6;
  const double peak = 12.0 / r * -std::expm1(-r * on_time / L);
  EXPECT_NEAR(il.max / peak, 1.0, 1e-12) << "peak " << il.max << " expected " << peak;
}

TEST(Simulation, IntervalFractionsOfEveryCycleSumToOne) {
  class Check : public Observer {
   public:
    void on_cycle(const CycleMetrics& m) override {
      double sum = 0;
      for (const auto& i : m.intervals) sum += i.fraction;
      worst = std::max(worst, std::abs(sum - 1.0));
    }
    double worst = 0;
  } check;
  SimulationOptions o;
  o.periods = 50;
  Simulation sim(dcm_boost(), o);
  sim.run(&check);
  EXPECT_LT(check.worst, 1e-12);
}

TEST(Simulation, PiecesCoverTheRunWithoutGapsOrOverlaps) {
  class Check : public Observer {
   public:
    void on_piece(const PieceView& p) override {
      worst = std::max(worst, std::abs(p.t_begin() - last_end));
      last_end = p.t_end();
    }
    double last_end = 0, worst = 0;
  } check;
  SimulationOptions o;
  o.periods = 20;
  Simulation sim(dcm_boost(), o);
  const RunSummary s = sim.run(&check);
  EXPECT_LT(check.worst, 1e-18);
  EXPECT_NEAR(check.last_end, 20 * 5e-6, 1e-18);
  EXPECT_DOUBLE_EQ(s.end_time_s, 20 * 5e-6);
}

TEST(Simulation, SoftStartSetsTheOnFractionOfEachPeriod) {
  PwmModulator m = pwm(200e3, 0.3);
  m.soft_start = SoftStart{0.05, 10};
  class Check : public Observer {
   public:
    void on_cycle(const CycleMetrics& c) override { d1.push_back(c.intervals.front().fraction); }
    std::vector<double> d1;
  } check;
  SimulationOptions o;
  o.periods = 15;
  Simulation sim(dcm_boost(m), o);
  sim.run(&check);
  ASSERT_EQ(check.d1.size(), 15u);
  for (int k = 0; k < 15; ++k)
    EXPECT_NEAR(check.d1[k], 0.05 + 0.25 * std::min(k, 10) / 10.0, 1e-12) << "period " << k;
}

TEST(Simulation, StopsAtSteadyStateWhenAsked) {
  SimulationOptions o;
  o.periods = 100000;
  o.stop_at_steady_state = true;
  o.steady_state_tolerance = 1e-9;
  Simulation sim(dcm_boost(), o);
  const RunSummary s = sim.run();
  EXPECT_EQ(s.end, RunEnd::kSteadyState);
  EXPECT_LT(s.cycles, 100000);
  EXPECT_GT(s.cycles, 100);  // R C = 2.8 ms = 564 periods: it cannot settle in 100
  EXPECT_LT(s.last_cycle.state_change, 1e-9);
}

TEST(Simulation, StartupFiguresTrackPeakCurrentAndOutputOvershoot) {
  SimulationOptions o;
  o.periods = 3000;
  o.output_signal = "out.v";
  Simulation sim(dcm_boost(), o);
  const RunSummary s = sim.run();
  ASSERT_EQ(s.startup.inductors.size(), 1u);
  // From rest the first on-time sees the full input: peak >= the DCM steady-state peak.
  EXPECT_GE(s.startup.peak_inductor_current_a[0], 1.79);
  EXPECT_GT(s.startup.overshoot, 0.0);  // a light-load boost from rest overshoots
  EXPECT_GT(s.startup.settling_cycle, 0);
  EXPECT_LT(s.startup.settling_cycle, 3000);
}

TEST(Simulation, CacheBuildsEachConfigurationOnce) {
  SimulationOptions o;
  o.periods = 200;
  Simulation sim(dcm_boost(), o);
  const RunSummary s = sim.run();
  EXPECT_LE(s.configurations_built, 4u);
  EXPECT_GT(s.cache_hits, 500u);
}

}  // namespace

namespace {

TEST(Simulation, PerElementEnergiesAddUpToTheTotalsAndMatchJouleHeating) {
  using namespace pulsewise;
  SimulationOptions o;
  o.periods = 400;
  o.recorded_signals = {"Rload.i"};
  Simulation sim(dcm_boost(), o);
  const RunSummary s = sim.run();
  ASSERT_TRUE(s.ok());
  const CycleMetrics& m = s.last_cycle;
  double in = 0, out = 0, load = 0;
  for (const ElementEnergy& e : m.element_energy) {
    const Element& el = sim.model().circuit().elements()[e.element];
    (el.kind == ElementKind::kVoltageSource ? in : out) += e.energy_j;
    if (el.name == "Rload") load = e.energy_j;
  }
  EXPECT_NEAR(in, m.energy_in_j, 1e-15 * std::abs(m.energy_in_j));
  EXPECT_NEAR(out, m.dissipated_j, 1e-12 * m.dissipated_j);
  // Joule's law: a resistor dissipates R * I_rms^2 over the period.
  const double joule = 60.0 * m.signals[0].rms * m.signals[0].rms * 5e-6;
  EXPECT_NEAR(load / joule, 1.0, 1e-12);
}

}  // namespace

namespace {

TEST(Simulation, OvershootOfANegativeOutputIsMeasuredTowardMoreNegativeValues) {
  using namespace pulsewise;
  // Inverting buck-boost from rest, CCM, output -D/(1-D) Vin = -12 V (Erickson and Maksimovic,
  // Fundamentals of Power Electronics, 2nd ed., ch. 2); a lightly damped LC output overshoots.
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(12.0))
      .add_switch("S1", "in", "sw", "pwm", SwitchOptions{10e-3, kOpen})
      .add_inductor("L1", "sw", "0", 22e-6)
      .add_diode("D1", "out", "sw", DiodeOptions{10e-3, 0.0, kOpen})
      .add_capacitor("C1", "out", "0", 22e-6)
      .add_resistor("Rload", "out", "0", 20.0)
      .add_modulator(pwm(200e3, 0.5));
  SimulationOptions o;
  o.periods = 3000;
  o.output_signal = "out.v";
  const RunSummary s = Simulation(c, o).run();
  ASSERT_TRUE(s.ok()) << s.message;
  const double final_value = s.last_cycle.signals.back().average;
  EXPECT_LT(final_value, -11.0);
  EXPECT_LT(s.startup.output_peak, final_value);  // more negative than where it settles
  EXPECT_GT(s.startup.overshoot, 0.0);
  EXPECT_NEAR(s.startup.overshoot, (s.startup.output_peak - final_value) / final_value, 1e-15);
}

}  // namespace
