// Source waveforms, and sinusoidal sources kept exact inside the piecewise-linear engine.
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>

#include "pulsewise/pulsewise.hpp"

namespace {

using namespace pulsewise;
constexpr double kPi = std::numbers::pi;

TEST(Waveform, PiecewiseLinearInterpolatesAndHoldsItsEnds) {
  const Waveform w = Waveform::piecewise_linear({{1.0, 2.0}, {3.0, 6.0}});
  EXPECT_DOUBLE_EQ(w.value(0.0), 2.0);
  EXPECT_DOUBLE_EQ(w.value(2.0), 4.0);
  EXPECT_DOUBLE_EQ(w.slope(2.0), 2.0);
  EXPECT_DOUBLE_EQ(w.value(5.0), 6.0);
  EXPECT_DOUBLE_EQ(w.next_breakpoint_after(1.5), 3.0);
}

TEST(Waveform, StepIsRightContinuous) {
  const Waveform w = Waveform::step(1e-3, 0.0, 5.0);
  EXPECT_EQ(w.value(0.999e-3), 0.0);
  EXPECT_EQ(w.value(1e-3), 5.0);
}

TEST(Waveform, RectifiedSineBreaksAtEveryZeroCrossingAndFlipsItsSlope) {
  const double f = 50.0;
  const Waveform w = Waveform::rectified_sine(0.0, 325.0, f);
  const double half = 1 / (2 * f);
  EXPECT_NEAR(w.next_breakpoint_after(0.001), half, 1e-15);
  EXPECT_NEAR(w.next_breakpoint_after(half), 2 * half, 1e-15);
  EXPECT_LT(w.slope(half * 0.999), 0.0);
  EXPECT_GT(w.slope(half), 0.0);
  EXPECT_NEAR(w.value(half * 1.5), 325.0, 1e-9);
}

// Samples the recorded signal at the end of the run.
class LastValue : public Observer {
 public:
  void on_piece(const PieceView& p) override {
    double v[1];
    p.recorded_values_at(p.t_end(), v);
    value = v[0];
    t = p.t_end();
  }
  double value = 0, t = 0;
};

TEST(Waveform, SineSourceDrivesAnRcFilterExactly) {
  // v_C for a sine applied at t = 0 to an RC low-pass starting at rest is the steady sinusoid
  // plus a decaying transient (the standard first-order response, e.g. Alexander and Sadiku,
  // Fundamentals of Electric Circuits, ch. 7 and 9):
  //   v(t) = A / (1 + (wRC)^2) * (sin wt - wRC cos wt + wRC e^{-t/RC}).
  const double R = 100.0, C = 1e-6, f = 5e3, A = 10.0, w = 2 * kPi * f;
  Circuit c;
  c.add_voltage_source("V1", "in", "0", Waveform::sine(0.0, A, f))
      .add_resistor("R1", "in", "out", R)
      .add_capacitor("C1", "out", "0", C);
  SimulationOptions o;
  o.switching_period_s = 10e-6;
  o.periods = 137;
  o.recorded_signals = {"out.v"};
  Simulation sim(c, o);
  LastValue last;
  ASSERT_TRUE(sim.run(&last).ok());
  const double tau = R * C, t = last.t;
  const double expected =
      A / (1 + w * w * tau * tau) *
      (std::sin(w * t) - w * tau * std::cos(w * t) + w * tau * std::exp(-t / tau));
  // 137 periods of rounding in a well-conditioned recurrence: 1e-12 of the amplitude.
  EXPECT_NEAR(last.value, expected, 1e-12 * A) << "t = " << t;
}

TEST(Waveform, RectifiedSineIntoAResistorHasTheTextbookAverage) {
  // Full-wave rectified sine: average 2A/pi, RMS A/sqrt(2) over a half line period.
  const double A = 325.0, f = 50.0;
  Circuit c;
  c.add_voltage_source("V1", "in", "0", Waveform::rectified_sine(0.0, A, f))
      .add_resistor("R1", "in", "0", 1.0);
  SimulationOptions o;
  o.switching_period_s = 1 / (2 * f);  // one half line period per cycle
  o.periods = 3;
  o.recorded_signals = {"in.v"};
  Simulation sim(c, o);
  const RunSummary s = sim.run();
  ASSERT_TRUE(s.ok()) << s.message;
  EXPECT_NEAR(s.last_cycle.signals[0].average, 2 * A / kPi, 1e-10 * A);
  EXPECT_NEAR(s.last_cycle.signals[0].rms, A / std::sqrt(2.0), 1e-10 * A);
  EXPECT_NEAR(s.last_cycle.signals[0].max, A, 1e-10 * A);
  EXPECT_NEAR(s.last_cycle.signals[0].min, 0.0, 1e-10 * A);
}

}  // namespace
