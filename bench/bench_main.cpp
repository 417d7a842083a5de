// The benchmarks of issue 4, section 3 (docs/performance.md): each case run by pulsewise from its
// circuit file and by the two baselines, all measured in one process.
//
//   pulsewise/<case>         load bench/data/<case>.toml, build the Simulation, run it (per-cycle
//                            metrics on, no observer, so no recording)
//   pulsewise_computed/<case> the same with repeat_recurring_periods off: every period is
//                            computed (or replayed), none is taken from an earlier one, so the
//                            speed is that of the periods of a start-up or of a changing load
//   baseline_a_rk4/<case>    fixed-step RK4 at the step that meets 1e-6 relative (found first by
//                            halving the step; the search is printed on stderr)
//   baseline_b_dopri5/<case> Boost.Odeint dopri5, dense output, tolerances 1e-9, bisected events
//   scenario/<name>          a shipped demo scenario with disturbances (data/<name>.toml: a load
//                            step and its release, a line sag), run as written
//   scenario_computed/<name> the same with the replay and the repeat off: every period computed
//                            by the piece engine, the baseline for what the quiet stretches
//                            between the disturbances give
//
// Counters: periods_per_s (CPU time; the machine is shared, so CPU time is the steadier measure),
// rel_error = |final cycle average of the output - reference| / |reference| against the
// long-double reference (reference.hpp), final_average_v, and steps_per_period for baseline A.
// Run with --benchmark_repetitions=N to get medians (scripts/run-benchmarks does).
#include <benchmark/benchmark.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <map>
#include <stdexcept>
#include <string>

#include "baseline_dopri5.hpp"
#include "baseline_rk4.hpp"
#include "pulsewise/circuit_file.hpp"
#include "pulsewise/simulation.hpp"
#include "reference.hpp"

#ifndef PWBENCH_DATA_DIR
#error "PWBENCH_DATA_DIR must name bench/data"
#endif
#ifndef PWBENCH_SCENARIO_DIR
#error "PWBENCH_SCENARIO_DIR must name data/"
#endif

namespace {

constexpr long kPeriods = 20000;             // every case: 20 000 periods from the zero state
constexpr double kBaselineATarget = 1e-6;    // issue 4: relative error baseline A must reach
constexpr int kBaselineAMaxSteps = 1 << 16;  // give up refining beyond this many steps a period

std::string case_file(std::string_view name) {
  static const std::map<std::string_view, std::string> files = {
      {"case1", "case1-dcm-boost.toml"},
      {"case2", "case2-sync-buck.toml"},
      {"case3", "case3-interleaved-buck.toml"},
      {"case4", "case4-dcm-sepic.toml"}};
  return std::string(PWBENCH_DATA_DIR) + "/" + files.at(name);
}

template <template <class> class Case>
long double reference_average() {
  static const long double value = [] {
    const pwbench::ReferenceResult r = pwbench::ReferenceSolver<Case>({kPeriods, 0.5L}).run();
    std::fprintf(stderr, "reference %s average=%.18Lf events=%ld\n", Case<double>::kName.data(),
                 r.final_average, r.events);
    return r.final_average;
  }();
  return value;
}

// PWBENCH_SKIP_REFERENCE=1 leaves the reference out (errors become NaN), for profiling.
bool skip_reference() {
  static const bool skip = [] {
    const char* value = std::getenv("PWBENCH_SKIP_REFERENCE");
    return value != nullptr && std::string(value) == "1";
  }();
  return skip;
}

template <template <class> class Case>
double relative_error(double value) {
  if (skip_reference()) return NAN;
  const long double ref = reference_average<Case>();
  return static_cast<double>(std::fabs(static_cast<long double>(value) - ref) / std::fabs(ref));
}

// Halves the RK4 step, starting from the case's gate-edge grid, until the final average is within
// kBaselineATarget of the reference. Returns the steps per period; 0 when the limit was reached.
template <template <class> class Case>
int baseline_a_steps() {
  static const int steps = [] {
    for (int n = Case<double>::kEdgeGrid; n <= kBaselineAMaxSteps; n *= 2) {
      const pwbench::FixedStepResult r = pwbench::Rk4Baseline<Case>(n).run(kPeriods);
      const double error = r.ok ? relative_error<Case>(r.final_average) : INFINITY;
      std::fprintf(stderr, "refine %s steps_per_period=%d rel_error=%.3e average=%.12f\n",
                   Case<double>::kName.data(), n, error, r.final_average);
      if (error <= kBaselineATarget) return n;
    }
    return 0;
  }();
  return steps;
}

void set_common_counters(benchmark::State& state, double average, double error) {
  state.counters["periods_per_s"] = benchmark::Counter(
      static_cast<double>(kPeriods), benchmark::Counter::kIsIterationInvariantRate);
  state.counters["rel_error"] = error;
  state.counters["final_average_v"] = average;
}

struct RunSummaryCounts {
  long replayed = 0, repeated = 0;
  double output_average = 0.0;
};

// The recorded signal that the run names as its output.
std::size_t output_index(const pulsewise::RunSummary& summary,
                         const pulsewise::SimulationOptions& options) {
  for (std::size_t k = 0; k < summary.recorded.size(); ++k)
    if (summary.recorded[k].name == options.output_signal) return k;
  throw std::runtime_error("the output signal " + options.output_signal + " is not recorded");
}

template <template <class> class Case, bool kRepeat>
void bm_pulsewise(benchmark::State& state) {
  const std::string path = case_file(Case<double>::kName);
  if (!skip_reference()) reference_average<Case>();
  double average = 0.0;
  long repeated = 0;
  for (auto _ : state) {
    const pulsewise::CircuitFile file = pulsewise::load_circuit_file(path);
    if (file.simulation.periods != kPeriods) throw std::runtime_error(path + ": periods changed");
    pulsewise::SimulationOptions options = file.simulation;
    options.repeat_recurring_periods = kRepeat;
    pulsewise::Simulation simulation(file.circuit, options);
    const pulsewise::RunSummary summary = simulation.run();
    if (!summary.ok()) {
      state.SkipWithError(summary.message.c_str());
      return;
    }
    average = summary.last_cycle.signals.at(output_index(summary, options)).average;
    repeated = summary.repeated_periods;
  }
  set_common_counters(state, average, relative_error<Case>(average));
  state.counters["repeated_periods"] = static_cast<double>(repeated);
}

template <template <class> class Case>
void bm_baseline_a(benchmark::State& state) {
  const int steps = baseline_a_steps<Case>();
  if (steps == 0) {
    state.SkipWithError("baseline A did not reach 1e-6 within the step limit");
    return;
  }
  const pwbench::Rk4Baseline<Case> baseline(steps);
  double average = 0.0;
  for (auto _ : state) {
    const pwbench::FixedStepResult r = baseline.run(kPeriods);
    average = r.final_average;
  }
  set_common_counters(state, average, relative_error<Case>(average));
  state.counters["steps_per_period"] = steps;
}

template <template <class> class Case>
void bm_baseline_b(benchmark::State& state) {
  if (!skip_reference()) reference_average<Case>();
  const pwbench::Dopri5Baseline<Case> baseline(1e-9, 1e-9);
  pwbench::AdaptiveResult r;
  for (auto _ : state) {
    r = baseline.run(kPeriods);
  }
  if (!r.ok) state.SkipWithError("baseline B: inconsistent diode pattern");
  set_common_counters(state, r.final_average, relative_error<Case>(r.final_average));
  state.counters["steps_per_period"] = static_cast<double>(r.steps) / kPeriods;
}

// A demo scenario as written (fast) or with every period computed by the piece engine.
void bm_scenario(benchmark::State& state, const std::string& name, bool fast) {
  const std::string path = std::string(PWBENCH_SCENARIO_DIR) + "/" + name + ".toml";
  RunSummaryCounts counts;
  long periods = 0;
  for (auto _ : state) {
    const pulsewise::CircuitFile file = pulsewise::load_circuit_file(path);
    pulsewise::SimulationOptions options = file.simulation;
    options.replay_repeating_periods = fast;
    options.repeat_recurring_periods = fast;
    periods = options.periods;
    const pulsewise::RunSummary summary = pulsewise::Simulation(file.circuit, options).run();
    if (!summary.ok()) {
      state.SkipWithError(summary.message.c_str());
      return;
    }
    counts = {summary.replayed_periods, summary.repeated_periods,
              summary.last_cycle.signals.at(output_index(summary, options)).average};
  }
  state.counters["periods_per_s"] = benchmark::Counter(
      static_cast<double>(periods), benchmark::Counter::kIsIterationInvariantRate);
  state.counters["replayed_periods"] = static_cast<double>(counts.replayed);
  state.counters["repeated_periods"] = static_cast<double>(counts.repeated);
  state.counters["final_average_v"] = counts.output_average;
}

void register_scenario(const std::string& name) {
  for (auto* b :
       {benchmark::RegisterBenchmark(("scenario/" + name).c_str(), bm_scenario, name, true),
        benchmark::RegisterBenchmark(("scenario_computed/" + name).c_str(), bm_scenario, name,
                                     false)})
    b->Unit(benchmark::kMillisecond)->MinTime(0.2);
}

template <template <class> class Case>
void register_case() {
  const std::string name(Case<double>::kName);
  for (auto* b :
       {benchmark::RegisterBenchmark(("pulsewise/" + name).c_str(), bm_pulsewise<Case, true>),
        benchmark::RegisterBenchmark(("pulsewise_computed/" + name).c_str(),
                                     bm_pulsewise<Case, false>),
        benchmark::RegisterBenchmark(("baseline_a_rk4/" + name).c_str(), bm_baseline_a<Case>),
        benchmark::RegisterBenchmark(("baseline_b_dopri5/" + name).c_str(), bm_baseline_b<Case>)})
    b->Unit(benchmark::kMillisecond)->MinTime(0.2);
}

}  // namespace

int main(int argc, char** argv) {
  register_case<pwbench::DcmBoost>();
  register_case<pwbench::SyncBuck>();
  register_case<pwbench::InterleavedBuck>();
  register_case<pwbench::DcmSepic>();
  register_scenario("rack-sync-buck");
  register_scenario("wide-input-sepic");
  benchmark::Initialize(&argc, argv);
  if (benchmark::ReportUnrecognizedArguments(argc, argv)) return 1;
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  return 0;
}
