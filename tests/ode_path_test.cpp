// The ODE path (Boost.Odeint Dormand-Prince with dense output) for elements that are nonlinear
// between events: checked against the exact path and against analytic solutions.
#include <gtest/gtest.h>

#include <cmath>

#include "detail/nonlinear.hpp"
#include "pulsewise/pulsewise.hpp"
#include "test_circuits.hpp"

namespace {

using namespace pulsewise;

using test::pwm;

Circuit dcm_boost() {
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(12.0))
      .add_inductor("L1", "in", "sw", 10e-6, InductorOptions{20e-3, 0.0, 0.0, 0.0})
      .add_switch("S1", "sw", "0", "pwm", SwitchOptions{10e-3, kOpen})
      .add_diode("D1", "sw", "out", DiodeOptions{10e-3, 0.3, kOpen})
      .add_capacitor("C1", "out", "0", 47e-6, CapacitorOptions{5e-3, 15.0})
      .add_resistor("Rload", "out", "0", 60.0)
      .add_modulator(pwm(200e3, 0.3));
  return c;
}

TEST(OdePath, AgreesWithTheExactPathOnCycleAveragesOfALinearConverter) {
  SimulationOptions exact;
  exact.periods = 200;
  exact.recorded_signals = {"out.v", "L1.i", "D1.i"};
  SimulationOptions ode = exact;
  ode.force_ode_path = true;
  const RunSummary a = Simulation(dcm_boost(), exact).run();
  const RunSummary b = Simulation(dcm_boost(), ode).run();
  ASSERT_TRUE(a.ok() && b.ok()) << a.message << " / " << b.message;
  ASSERT_EQ(a.cycles, b.cycles);
  for (std::size_t j = 0; j < a.recorded.size(); ++j) {
    const double x = a.last_cycle.signals[j].average, y = b.last_cycle.signals[j].average;
    const double scale = std::max(std::abs(x), a.last_cycle.signals[j].max);
    // Issue target 1e-8 relative; the integrator runs at rtol 1e-10.
    EXPECT_LT(std::abs(x - y) / scale, 1e-8) << a.recorded[j].name << ": " << x << " vs " << y;
    std::cout << a.recorded[j].name << " average: exact " << x << ", ODE " << y
              << ", relative difference " << std::abs(x - y) / scale << "\n";
  }
  EXPECT_EQ(b.last_cycle.mode, ConductionMode::kDcm);
}

TEST(OdePath, SaturatingInductorUnderConstantVoltageFollowsTheInverseFluxCurve) {
  // Faraday's law: v = d psi / dt, so a constant voltage from rest gives psi(t) = v t exactly
  // and i(t) = psi^-1(v t). The run drives the current far into saturation.
  const double V = 5.0, L0 = 10e-6, Ls = 1e-6, Is = 2.0;
  Circuit c;
  c.add_voltage_source("V1", "a", "0", Waveform::constant(V))
      .add_inductor("L1", "a", "0", L0, InductorOptions{0.0, 0.0, Is, Ls});
  SimulationOptions o;
  o.switching_period_s = 1e-6;
  o.periods = 20;  // psi = 1e-4 V s: i ~ 3 * Is, well past the knee
  o.recorded_signals = {"L1.i"};
  class Sampler : public Observer {
   public:
    void on_piece(const PieceView& p) override {
      double v[1];
      p.recorded_values_at(p.t_end(), v);
      samples.push_back({p.t_end(), v[0]});
    }
    std::vector<std::pair<double, double>> samples;
  } sampler;
  Simulation sim(c, o);
  ASSERT_TRUE(sim.run(&sampler).ok());
  const detail::SaturationCurve curve{L0, Ls, Is};
  double worst = 0;
  for (const auto& [t, i] : sampler.samples)
    worst = std::max(worst, std::abs(i - curve.current_for(V * t)) / Is);
  std::cout << "largest error of i(t) against psi^-1(v t): " << worst << " * Is\n";
  EXPECT_LT(worst, 1e-8);  // integration tolerance 1e-10 relative, accumulated over the run
  EXPECT_GT(sampler.samples.back().second, 2.5 * Is);
}

TEST(OdePath, SaturationRaisesThePeakCurrentAboveTheLinearInductor) {
  // Same boost, inductor saturating at 1 A down to a third of its inductance: the on-time ramp
  // steepens past the knee, so the peak exceeds the linear one (common practice, no source).
  Circuit linear = dcm_boost();
  Circuit saturating;
  for (const Element& e : linear.elements()) {
    if (e.name == "L1") {
      saturating.add_inductor("L1", e.node_a, e.node_b, e.value,
                              InductorOptions{20e-3, 0.0, 1.0, e.value / 3});
      continue;
    }
    switch (e.kind) {
      case ElementKind::kVoltageSource:
        saturating.add_voltage_source(e.name, e.node_a, e.node_b, e.waveform);
        break;
      case ElementKind::kSwitch:
        saturating.add_switch(e.name, e.node_a, e.node_b, e.gate,
                              {e.on_resistance_ohm, e.off_resistance_ohm});
        break;
      case ElementKind::kDiode:
        saturating.add_diode(e.name, e.node_a, e.node_b,
                             {e.on_resistance_ohm, e.forward_voltage_v, e.off_resistance_ohm});
        break;
      case ElementKind::kCapacitor:
        saturating.add_capacitor(e.name, e.node_a, e.node_b, e.value,
                                 {e.series_resistance_ohm, e.initial_value});
        break;
      default: saturating.add_resistor(e.name, e.node_a, e.node_b, e.value); break;
    }
  }
  saturating.add_modulator(pwm(200e3, 0.3));
  SimulationOptions o;
  o.periods = 100;
  o.recorded_signals = {"L1.i"};
  const RunSummary a = Simulation(linear, o).run();
  const RunSummary b = Simulation(saturating, o).run();
  ASSERT_TRUE(a.ok() && b.ok()) << b.message;
  EXPECT_GT(b.last_cycle.signals[0].max, 1.3 * a.last_cycle.signals[0].max);
}

TEST(OdePath, ConverterWithAConstantPowerLoadDeliversThatPower) {
  // A buck feeding a 10 W constant-power load (a downstream converter) with nearly lossless
  // switches: at steady state the load draws exactly P on average (i = P / v pointwise), and by
  // energy conservation the source delivers P plus the small conduction losses. The load's
  // negative incremental resistance (-V^2/P = -14.4 ohm) makes an undamped LC output oscillate
  // (R. D. Middlebrook, "Input filter considerations in design and application of switching
  // regulators", IEEE IAS Annual Meeting, 1976; from memory), so C1 gets 0.2 ohm ESR, well above
  // L / (C |R|) = 0.033 ohm.
  const double P = 10.0;
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(24.0))
      .add_switch("S1", "in", "sw", "pwm", SwitchOptions{1e-3, kOpen})
      .add_diode("D1", "0", "sw", DiodeOptions{1e-3, 0.0, kOpen})
      .add_inductor("L1", "sw", "out", 47e-6, InductorOptions{1e-3, 0.0, 0.0, 0.0})
      .add_capacitor("C1", "out", "0", 100e-6, CapacitorOptions{0.2, 12.0})
      .add_constant_power_load("Load", "out", "0", P, ConstantPowerOptions{6.0})
      .add_modulator(pwm(100e3, 0.5));
  SimulationOptions o;
  o.periods = 4000;
  o.recorded_signals = {"out.v", "Load.i", "Load.v"};
  Simulation sim(c, o);
  // Start near the operating point: 12 V out, 10/12 A in the inductor.
  Eigen::VectorXd x0(2);
  x0 << P / 12.0, 12.0;
  sim.set_initial_state(x0);
  const RunSummary s = sim.run();
  ASSERT_TRUE(s.ok()) << s.message;
  const double T = 10e-6;
  const double p_in = s.last_cycle.energy_in_j / T;
  const double p_loss_other = s.last_cycle.dissipated_j / T - P;
  std::cout << "input power " << p_in << " W, load " << P << " W, other losses " << p_loss_other
            << " W\n";
  EXPECT_LT(s.last_cycle.state_change, 1e-6);               // it has settled
  EXPECT_NEAR(s.last_cycle.signals[0].average, 12.0, 0.2);  // V_out ~ D Vin for a buck
  // The load's own average power: average of v * i over the period equals P.
  EXPECT_NEAR(s.last_cycle.signals[1].average * s.last_cycle.signals[2].average, P, 1e-3 * P);
  EXPECT_GT(p_loss_other, 0.0);
  EXPECT_LT(p_loss_other, 0.01 * P);  // milliohm switches, 0.2 ohm ESR with ~0.4 A rms ripple
  // Energy balance over the last period: in = stored change + dissipated (integration tolerance).
  const double balance =
      s.last_cycle.energy_in_j - s.last_cycle.stored_energy_change_j - s.last_cycle.dissipated_j;
  EXPECT_LT(std::abs(balance) / s.last_cycle.energy_in_j, 1e-6);
  EXPECT_NEAR(p_in, P + p_loss_other, 1e-3 * P);
}

}  // namespace

namespace {

// The constant-power buck with an RC snubber (1 ohm, 1 nF: tau = 1 ns) across the diode. The
// snubber's mode is 10^4 times faster than the 10 us period: a stiff system.
pulsewise::Circuit snubbed_cpl_buck() {
  using namespace pulsewise;
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(24.0))
      .add_switch("S1", "in", "sw", "pwm", SwitchOptions{1e-3, kOpen})
      .add_diode("D1", "0", "sw", DiodeOptions{1e-3, 0.0, kOpen})
      .add_resistor("Rsn", "sw", "snub", 1.0)
      .add_capacitor("Csn", "snub", "0", 1e-9)
      .add_inductor("L1", "sw", "out", 47e-6, InductorOptions{1e-3, 0.0, 0.0, 0.0})
      .add_capacitor("C1", "out", "0", 100e-6, CapacitorOptions{0.2, 12.0})
      .add_constant_power_load("Load", "out", "0", 10.0, ConstantPowerOptions{6.0})
      .add_modulator(test::pwm(100e3, 0.5));
  return c;
}

struct PieceCount : pulsewise::Observer {
  void on_piece(const pulsewise::PieceView&) override { ++pieces; }
  long pieces = 0;
};

pulsewise::RunSummary run_snubbed(pulsewise::OdeStepper stepper, long* pieces) {
  using namespace pulsewise;
  SimulationOptions o;
  o.periods = 40;
  o.recorded_signals = {"out.v", "L1.i", "Csn.v"};
  o.ode_stepper = stepper;
  Simulation sim(snubbed_cpl_buck(), o);
  Eigen::VectorXd x0(3);  // L1, then Csn and C1 in element order
  x0 << 10.0 / 12.0, 0.0, 12.0;
  sim.set_initial_state(x0);
  PieceCount count;
  const RunSummary s = sim.run(&count);
  *pieces = count.pieces;
  return s;
}

TEST(OdePath, StiffStepperAgreesWithTheExplicitOneInFarFewerSteps) {
  using namespace pulsewise;
  long explicit_pieces = 0, stiff_pieces = 0, auto_pieces = 0;
  const RunSummary e = run_snubbed(OdeStepper::kExplicit, &explicit_pieces);
  const RunSummary r = run_snubbed(OdeStepper::kStiff, &stiff_pieces);
  const RunSummary a = run_snubbed(OdeStepper::kAuto, &auto_pieces);
  ASSERT_TRUE(e.ok() && r.ok() && a.ok()) << e.message << " / " << r.message;
  for (std::size_t j = 0; j < e.recorded.size(); ++j) {
    const double x = e.last_cycle.signals[j].average, y = r.last_cycle.signals[j].average;
    const double scale = std::max(std::abs(x), std::abs(e.last_cycle.signals[j].max));
    // Both integrate to rtol 1e-10; over 40 periods the difference stays far below 1e-6.
    EXPECT_LT(std::abs(x - y) / scale, 1e-6) << e.recorded[j].name << ": " << x << " vs " << y;
  }
  std::cout << "steps: explicit " << explicit_pieces << ", stiff " << stiff_pieces << ", auto "
            << auto_pieces << "\n";
  // The explicit pair is stability-bound everywhere (Dormand-Prince's real stability interval is
  // about 3.3 / |lambda|: Hairer, Norsett and Wanner, Solving ODEs I, 2nd ed., sec. II.4, from
  // memory), so at least 10 us / 3.3 ns = 3000 steps a period; the stiff stepper is accuracy-bound
  // only inside the snubber transients that each switching edge excites.
  EXPECT_GT(explicit_pieces, 40 * 3000);
  EXPECT_LT(2 * stiff_pieces, explicit_pieces);
  EXPECT_EQ(auto_pieces, stiff_pieces);  // and the automatic choice takes it here
  const double balance =
      r.last_cycle.energy_in_j - r.last_cycle.stored_energy_change_j - r.last_cycle.dissipated_j;
  EXPECT_LT(std::abs(balance) / r.last_cycle.energy_in_j, 1e-6);
}

}  // namespace
