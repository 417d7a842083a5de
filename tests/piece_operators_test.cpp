// The operators of pieces met again (lib/src/piece_operators.cpp) against the series they
// replace. A piece is z(s) = exp(M h s) z0, so its results are linear and quadratic functions of
// z0 and the operators give the same exact solution, rounded differently: every figure of a run
// must agree with the run that computes every piece by its series to 1e-12 of its scale, the
// bound the engine's specification sets for results with its caches on or off (issue 2,
// "Invariance"). Device events inside a piece must still be found (the operators hand such a
// piece back to the series), and so must a change of the sources, which the operators fold in.
// The other suites check the results themselves against published values with the operators on
// (the default).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "pulsewise/pulsewise.hpp"
#include "test_circuits.hpp"

namespace pulsewise {
namespace {

constexpr double kAgreement = 1e-12;  // relative to each figure's scale over the run

// Takes periods only: an observer of pieces turns the operators off.
class Periods final : public Observer {
 public:
  bool wants_pieces_and_events() const override { return false; }
  void on_cycle(const CycleMetrics& cycle) override { cycles.push_back(cycle); }
  std::vector<CycleMetrics> cycles;
};

struct RunRecord {
  RunSummary summary;
  std::vector<CycleMetrics> cycles;
};

RunRecord run(const Circuit& circuit, SimulationOptions options, bool operators) {
  options.reuse_piece_operators = operators;
  // Every period computed piece by piece (a replayed or repeated period has no pieces).
  options.repeat_recurring_periods = false;
  options.replay_repeating_periods = false;
  Periods periods;
  Simulation simulation(circuit, options);
  RunRecord r{simulation.run(&periods), {}};
  r.cycles = std::move(periods.cycles);
  return r;
}

// The largest |value| of a figure over the run's periods.
template <class F>
double scale_of(const std::vector<CycleMetrics>& cycles, F figure) {
  double scale = 0.0;
  for (const CycleMetrics& c : cycles) scale = std::max(scale, std::abs(figure(c)));
  return scale;
}

template <class F>
void expect_agreement(const RunRecord& a, const RunRecord& b, F figure, const std::string& what) {
  const double bound = kAgreement * scale_of(b.cycles, figure);
  for (std::size_t k = 0; k < a.cycles.size(); ++k) {
    ASSERT_NEAR(figure(a.cycles[k]), figure(b.cycles[k]), bound) << what << ", period " << k;
  }
}

void expect_same_periods(const RunRecord& a, const RunRecord& b) {
  ASSERT_EQ(a.cycles.size(), b.cycles.size());
  for (std::size_t k = 0; k < a.cycles.size(); ++k) {
    ASSERT_EQ(a.cycles[k].mode, b.cycles[k].mode) << "period " << k;
    ASSERT_EQ(a.cycles[k].events, b.cycles[k].events) << "period " << k;
    ASSERT_EQ(a.cycles[k].intervals.size(), b.cycles[k].intervals.size()) << "period " << k;
    for (std::size_t i = 0; i < a.cycles[k].intervals.size(); ++i) {
      EXPECT_EQ(a.cycles[k].intervals[i].pattern, b.cycles[k].intervals[i].pattern);
      ASSERT_NEAR(a.cycles[k].intervals[i].fraction, b.cycles[k].intervals[i].fraction, kAgreement)
          << "period " << k << ", interval " << i;
    }
  }
  const std::size_t signals = a.cycles.front().signals.size();
  for (std::size_t j = 0; j < signals; ++j) {
    const std::string name = "signal " + std::to_string(j);
    expect_agreement(
        a, b, [j](const CycleMetrics& c) { return c.signals[j].average; }, name);
    expect_agreement(
        a, b, [j](const CycleMetrics& c) { return c.signals[j].rms; }, name);
    expect_agreement(
        a, b, [j](const CycleMetrics& c) { return c.signals[j].min; }, name);
    expect_agreement(
        a, b, [j](const CycleMetrics& c) { return c.signals[j].max; }, name);
  }
  expect_agreement(
      a, b, [](const CycleMetrics& c) { return c.energy_in_j; }, "energy in");
  expect_agreement(
      a, b, [](const CycleMetrics& c) { return c.dissipated_j; }, "dissipated");
  const std::size_t elements = a.cycles.front().element_energy.size();
  for (std::size_t e = 0; e < elements; ++e)
    expect_agreement(
        a, b, [e](const CycleMetrics& c) { return c.element_energy[e].energy_j; },
        "element energy " + std::to_string(e));
}

// Runs with the operators on and off; expects every figure to agree and, so that the comparison
// is not vacuous, that the operators computed at least `per_period` pieces per period.
RunRecord expect_operators_agree(const Circuit& circuit, const SimulationOptions& options,
                                 double per_period) {
  const RunRecord with = run(circuit, options, true);
  const RunRecord without = run(circuit, options, false);
  EXPECT_TRUE(with.summary.ok()) << with.summary.message;
  EXPECT_TRUE(without.summary.ok()) << without.summary.message;
  EXPECT_EQ(without.summary.operator_pieces, 0);
  EXPECT_GE(static_cast<double>(with.summary.operator_pieces), per_period * with.summary.cycles);
  EXPECT_EQ(with.summary.events, without.summary.events);
  expect_same_periods(with, without);
  // Each state against the scale of its kind: the largest inductor current of the run, or the
  // largest final capacitor voltage (an inductor idle in DCM ends near zero).
  const auto& peaks = without.summary.startup.peak_inductor_current_a;
  const double current_scale = *std::max_element(peaks.begin(), peaks.end());
  const auto is_current = [&](Eigen::Index s) {
    const std::string& name = without.summary.state_names[static_cast<std::size_t>(s)];
    return name.size() > 2 && name.compare(name.size() - 2, 2, ".i") == 0;
  };
  double voltage_scale = 0.0;
  for (Eigen::Index s = 0; s < without.summary.final_state.size(); ++s)
    if (!is_current(s))
      voltage_scale = std::max(voltage_scale, std::abs(without.summary.final_state[s]));
  for (Eigen::Index s = 0; s < with.summary.final_state.size(); ++s)
    EXPECT_NEAR(with.summary.final_state[s], without.summary.final_state[s],
                kAgreement * (is_current(s) ? current_scale : voltage_scale))
        << without.summary.state_names[static_cast<std::size_t>(s)];
  for (std::size_t k = 0; k < with.summary.startup.peak_inductor_current_a.size(); ++k) {
    const double peak = without.summary.startup.peak_inductor_current_a[k];
    EXPECT_NEAR(with.summary.startup.peak_inductor_current_a[k], peak, kAgreement * peak);
  }
  return with;
}

// Two moving states. From rest the boost runs in CCM for its first periods (the diode conducts
// through the whole off-time, a stretch of fixed length that the operators take), then in DCM,
// where the diode current reaches zero inside that stretch: the operators must hand it back and
// the series find the event, or the modes and event counts would differ.
TEST(PieceOperators, DcmBoostStartUpAgreesWithTheSeries) {
  const RunRecord with = expect_operators_agree(
      test::dcm_boost(), test::run_options(1500, {"out.v", "L1.i", "sw.v"}), 0.9);
  ASSERT_FALSE(with.cycles.empty());
  const auto ccm = std::count_if(with.cycles.begin(), with.cycles.end(),
                                 [](const auto& c) { return c.mode == ConductionMode::kCcm; });
  EXPECT_GE(ccm, 3);
  EXPECT_EQ(with.cycles.back().mode, ConductionMode::kDcm);
  // Both stretches of a CCM period came from operators at least once.
  EXPECT_GT(with.summary.operator_pieces, with.summary.cycles);
}

// Without energy accounting the square integrals still come from the operators.
TEST(PieceOperators, RunWithoutEnergyAccountingAgreesWithTheSeries) {
  SimulationOptions options = test::run_options(800, {"out.v"});
  options.energy_accounting = false;
  expect_operators_agree(test::dcm_boost(), options, 0.9);
}

// One moving state (test::rl_chopper). Both stretches of every period recur; the diode's
// forward drop is a static entry of z that the operators fold in.
TEST(PieceOperators, OneMovingStateAgreesWithTheSeries) {
  expect_operators_agree(test::rl_chopper(), test::run_options(500, {"out.v", "L1.i"}), 1.9);
}

// Four moving states (test::dcm_sepic), with an inductor that is not recorded (its peak comes
// from its own operators).
TEST(PieceOperators, FourMovingStatesAgreeWithTheSeries) {
  expect_operators_agree(test::dcm_sepic(), test::run_options(600, {"out.v", "L1.i", "a.v"}), 0.9);
}

// A step of the input voltage (12 V to 9 V after 300 periods) changes a static entry of z that
// the operators were built with: they must hand the pieces back and be built again for the new
// input, or every period after the step would carry the old input.
TEST(PieceOperators, InputStepIsNotCarriedOverByOldOperators) {
  Circuit c;
  c.add_voltage_source("Vin", "in", "0", Waveform::step(300 / 200e3, 12.0, 9.0))
      .add_inductor("L1", "in", "sw", 10e-6)
      .add_switch("S1", "sw", "0", "pwm", SwitchOptions{10e-3, kOpen})
      .add_diode("D1", "sw", "out", DiodeOptions{10e-3, 0.0, kOpen})
      .add_capacitor("C1", "out", "0", 47e-6)
      .add_resistor("Rload", "out", "0", 60.0)
      .add_modulator(test::pwm(200e3, 0.3));
  const RunRecord with = expect_operators_agree(c, test::run_options(700, {"out.v", "L1.i"}), 0.9);
  // The step lowers the output: the last period's average is below the one before the step.
  ASSERT_EQ(with.cycles.size(), 700u);
  EXPECT_LT(with.cycles.back().signals[0].average, with.cycles[299].signals[0].average);
}

}  // namespace
}  // namespace pulsewise
