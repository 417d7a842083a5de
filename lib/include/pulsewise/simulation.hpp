// The cycle loop: simulates a circuit one switching period at a time with the exact
// piecewise-linear engine and reports per-cycle metrics computed from exact integrals.
//
//   pulsewise::Simulation sim(circuit, options);
//   pulsewise::RunSummary summary = sim.run(&observer);
//   std::cout << summary.brief_report();
#pragma once

#include <Eigen/Dense>
#include <cstddef>
#include <memory>
#include <string>
#include <vector>

#include "pulsewise/circuit.hpp"
#include "pulsewise/configuration_model.hpp"
#include "pulsewise/observer.hpp"

namespace pulsewise {

// Integrator of the ODE path (circuits with nonlinear elements).
enum class OdeStepper {
  kAuto,      // explicit, unless a configuration is stiff (fastest mode < 1/1000 of the period)
  kExplicit,  // Dormand-Prince 5(4) with dense output
  kStiff,     // Rosenbrock 4 with dense output (linearly implicit, L-stable)
};

// Options of one run. Every field has a default; validate() explains what is wrong.
struct SimulationOptions {
  // Length of one cycle of the cycle loop, s. 0: the period of the first modulator.
  double switching_period_s = 0.0;
  // Number of switching periods to simulate, > 0.
  long periods = 100;
  // Sub-steps per switching period on which event functions are bracketed, >= 1. The step is
  // further shortened in configurations whose fastest mode would turn by more than
  // max_step_norm radians within it.
  int substeps_per_period = 1;
  // Bound on ||M h||_1 of a sub-step (M the augmented system matrix); keeps the Taylor expansion
  // used inside a sub-step exact to machine precision and at most one extremum per sub-step.
  double max_step_norm = 0.5;
  // Events are located to this fraction of the switching period.
  double event_time_tolerance = 1e-14;
  // Relative tolerance (of the running signal magnitude) for device conditions at an event.
  double device_condition_tolerance = 1e-9;
  // Chattering guard: a run that needs more events than this in one period stops.
  int max_events_per_period = 200;
  // Cycling guard of the consistency search after an event.
  int max_consistency_iterations = 64;
  // Stop when the state changes by less than steady_state_tolerance (relative to its magnitude)
  // over steady_state_periods consecutive periods.
  bool stop_at_steady_state = false;
  double steady_state_tolerance = 1e-9;
  int steady_state_periods = 5;
  // Signals to compute metrics for (and to hand to observers). Empty: every state variable
  // (inductor currents, capacitor voltages) and every node voltage.
  std::vector<std::string> recorded_signals;
  // The output signal for overshoot and settling figures, e.g. "out.v". Empty: none.
  std::string output_signal;
  // Settling band as a fraction of the final cycle average of the output.
  double settling_band = 0.02;
  // CCM/DCM boundary band: a DCM idle interval shorter than this fraction of the period, or a
  // diode commutated off while carrying less than this fraction of the largest inductor current
  // seen, counts as the boundary.
  double boundary_tolerance = 1e-3;
  // Cache configuration models and transition data (off only to check the cache).
  bool cache = true;
  // Replay a switching period that repeats exactly (gates periodic, sources holding their
  // values, no gate schedule change or source breakpoint within a period; no state event: CCM in
  // steady state) from operators built once for its sequence of pieces, checked
  // piece by piece and replaced by the piece engine where the period no longer repeats. Needs
  // `cache`; not used while an observer that wants every piece is attached
  // (Observer::wants_pieces_and_events). Off only to check it: results agree with the piece
  // engine to rounding.
  bool replay_repeating_periods = true;
  // Once a period ends, to the bit, in the state a recent period began in (a steady state reached
  // to the last bit, or a short cycle of rounding), every later period takes the results of the
  // period it repeats instead of being computed again, up to the next gate schedule change or
  // source breakpoint (a load step, a line sag): the periods around it are computed, and those
  // after it repeat again once they recur. Needs periodic gates and sources that hold their
  // values (no sinusoid). Not used while an observer that wants every piece is attached. Off
  // only to check it: results are identical.
  bool repeat_recurring_periods = true;
  // Compute the pieces of configurations with at most 4 moving entries of the state (8 entries
  // with the inputs) by a kernel of fixed size, which does the same operations in the same order
  // as the general code (14 to 20 % fewer instructions on the benchmark's DCM converters). Off
  // only to check it: results are identical.
  bool small_block_kernel = true;
  // A piece met again in the same configuration and length (the on-time of a DCM period, from
  // one gate edge to the next) is computed, for configurations the kernel takes, from operators
  // built once for them: its results are linear and quadratic functions of its start state. Their
  // check hands the piece back to the series where a device condition may cross zero inside it.
  // Needs `cache`; not used while an observer that wants every piece is attached. Off only to
  // check it: results agree with the series to rounding.
  bool reuse_piece_operators = true;
  // Per-cycle energy from sources, change in stored energy and energy dissipated.
  bool energy_accounting = true;
  // ODE path (circuits with saturating inductors or constant-power loads): error tolerances of
  // the Dormand-Prince 5(4) integrator, relative and absolute (in the states' own units).
  double ode_relative_tolerance = 1e-10;
  double ode_absolute_tolerance = 1e-12;
  OdeStepper ode_stepper = OdeStepper::kAuto;
  // Use the ODE path even for a linear circuit (to check it against the exact path).
  bool force_ode_path = false;

  // Throws InputError (kInvalidOption) naming the option and the fix.
  void validate() const;
};

enum class ConductionMode { kNone, kCcm, kDcm, kBoundary };
const char* to_string(ConductionMode mode);

// Exact per-cycle statistics of one signal.
struct SignalStats {
  double average = 0.0;
  double rms = 0.0;
  double min = 0.0;
  double max = 0.0;
  double peak_to_peak() const { return max - min; }
};

// One stretch of the period spent in one configuration.
struct ConfigurationInterval {
  DevicePattern pattern = 0;
  double fraction = 0.0;  // of the switching period
};

// Energy of one element over a period: delivered (sources) or dissipated (resistive elements,
// devices, DCR, ESR, constant-power loads), J.
struct ElementEnergy {
  int element = -1;  // index into Circuit::elements()
  double energy_j = 0.0;
};

struct CycleMetrics {
  long index = 0;
  double start_time_s = 0.0;
  ConductionMode mode = ConductionMode::kNone;
  // Consecutive configurations of the period in order (consecutive equal patterns merged).
  // intervals[0..2] are D1, D2, D3 of the textbook notation.
  std::vector<ConfigurationInterval> intervals;
  std::vector<SignalStats> signals;  // per recorded signal
  long events = 0;
  double energy_in_j = 0.0;  // delivered by the sources
  double stored_energy_change_j = 0.0;
  double dissipated_j = 0.0;  // in resistors, DCR, ESR, device resistances and drops
  // Per element, every element that delivers or dissipates energy (sums: energy_in_j and
  // dissipated_j). Empty when energy accounting is off.
  std::vector<ElementEnergy> element_energy;
  double state_change = 0.0;  // ||x(end) - x(start)|| relative to ||x||
};

enum class RunEnd {
  kCompleted,                  // all requested periods simulated
  kSteadyState,                // stopped early at steady state
  kChattering,                 // too many events in one period
  kNoConsistentConfiguration,  // the consistency search cycled
  kInterruptedCurrent,         // a switch opened an inductor current with no freewheeling path
  kZeroResistanceLoop,         // a configuration closed a loop of zero-resistance branches
};
const char* to_string(RunEnd end);

struct StartupMetrics {
  std::vector<std::string> inductors;
  std::vector<double> peak_inductor_current_a;  // largest |i| over the run, per inductor
  // Extreme of the output signal over the run on the side of its final average: the largest
  // value for a positive output, the most negative for a negative one.
  double output_peak = 0.0;
  double overshoot = 0.0;        // (output_peak - final average) / final average, >= 0
  long settling_cycle = -1;      // first cycle from which the average stays inside the band
  long steady_state_cycle = -1;  // cycle at which steady state was detected, -1 if never
};

struct RunSummary {
  RunEnd end = RunEnd::kCompleted;
  std::string message;
  long cycles = 0;
  long events = 0;
  std::size_t configurations_built = 0;
  std::size_t cache_hits = 0;
  long replayed_periods = 0;  // periods computed by SimulationOptions::replay_repeating_periods
  long kernel_pieces = 0;     // pieces computed by SimulationOptions::small_block_kernel
  long operator_pieces = 0;   // pieces computed by SimulationOptions::reuse_piece_operators
  // SimulationOptions::repeat_recurring_periods: the periods taken from earlier ones, and the
  // length of the (last) cycle of states they repeat (1 for a steady state to the last bit;
  // 0: none).
  long repeated_periods = 0;
  long recurrence_periods = 0;
  double wall_time_s = 0.0;
  double end_time_s = 0.0;
  std::vector<SignalInfo> recorded;
  CycleMetrics last_cycle;
  StartupMetrics startup;
  Eigen::VectorXd final_state;
  std::vector<std::string> state_names;

  bool ok() const { return end == RunEnd::kCompleted || end == RunEnd::kSteadyState; }
  // A few lines an engineer reads at a glance.
  std::string brief_report() const;
};

class Simulation {
 public:
  // Throws InputError for a bad circuit or bad options.
  Simulation(const Circuit& circuit, SimulationOptions options);
  ~Simulation();
  Simulation(Simulation&&) noexcept;
  Simulation& operator=(Simulation&&) noexcept;

  RunSummary run(Observer* observer = nullptr);

  const CircuitModel& model() const;
  const SimulationOptions& options() const;
  // Start from this state instead of the elements' initial conditions.
  void set_initial_state(const Eigen::VectorXd& x0);
  // Describe a pattern: "S1 on, D1 off".
  std::string describe(DevicePattern pattern) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace pulsewise
