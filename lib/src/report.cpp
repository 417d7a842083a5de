// Names of enums, option validation and the brief text report of a run.
#include <cmath>
#include <sstream>

#include "pulsewise/observer.hpp"
#include "pulsewise/recording.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise {

const char* to_string(ConductionMode mode) {
  switch (mode) {
    case ConductionMode::kNone: return "none";
    case ConductionMode::kCcm: return "CCM";
    case ConductionMode::kDcm: return "DCM";
    case ConductionMode::kBoundary: return "boundary";
  }
  return "?";
}

const char* to_string(RunEnd end) {
  switch (end) {
    case RunEnd::kCompleted: return "completed";
    case RunEnd::kSteadyState: return "steady state";
    case RunEnd::kChattering: return "chattering";
    case RunEnd::kNoConsistentConfiguration: return "no consistent configuration";
    case RunEnd::kInterruptedCurrent: return "interrupted inductor current";
    case RunEnd::kZeroResistanceLoop: return "zero-resistance loop";
  }
  return "?";
}

const char* to_string(EventKind kind) {
  switch (kind) {
    case EventKind::kGateEdge: return "gate edge";
    case EventKind::kSourceBreakpoint: return "source breakpoint";
    case EventKind::kDeviceTurnOn: return "turn-on";
    case EventKind::kDeviceTurnOff: return "turn-off";
    case EventKind::kForcedTurnOff: return "forced turn-off";
    case EventKind::kForcedTurnOn: return "forced turn-on";
  }
  return "?";
}

namespace {

[[noreturn]] void bad_option(const std::string& option, const std::string& problem,
                             const std::string& fix) {
  throw InputError(ErrorKind::kInvalidOption, "", "option '" + option + "' " + problem, fix);
}

void require(bool ok, const char* option, const char* problem, const char* fix) {
  if (!ok) bad_option(option, problem, fix);
}

}  // namespace

void SimulationOptions::validate() const {
  require(std::isfinite(switching_period_s) && switching_period_s >= 0, "switching_period_s",
          "must be finite and not negative",
          "give the period in seconds, or 0 for the modulator's");
  require(periods > 0, "periods", "must be positive", "ask for at least one period");
  require(substeps_per_period >= 1 && substeps_per_period <= 100000, "substeps_per_period",
          "must be between 1 and 100000", "use the default 1 unless checking invariance");
  require(max_step_norm > 0 && max_step_norm <= 2, "max_step_norm", "must be in (0, 2]",
          "keep the default 0.5");
  require(event_time_tolerance > 0 && event_time_tolerance < 1e-3, "event_time_tolerance",
          "must be in (0, 1e-3)", "keep the default 1e-14");
  require(device_condition_tolerance > 0 && device_condition_tolerance < 1e-2,
          "device_condition_tolerance", "must be in (0, 1e-2)", "keep the default 1e-9");
  require(max_events_per_period >= 2, "max_events_per_period", "must be at least 2",
          "allow a few events per period");
  require(max_consistency_iterations >= 1, "max_consistency_iterations", "must be at least 1",
          "keep the default 64");
  require(steady_state_tolerance > 0, "steady_state_tolerance", "must be positive",
          "keep the default 1e-9");
  require(steady_state_periods >= 1, "steady_state_periods", "must be at least 1",
          "keep the default 5");
  require(settling_band > 0 && settling_band < 1, "settling_band", "must be in (0, 1)",
          "use a band such as 0.02 (2 %)");
  require(ode_relative_tolerance > 0 && ode_relative_tolerance < 1e-2, "ode_relative_tolerance",
          "must be in (0, 1e-2)", "keep the default 1e-10");
  require(ode_absolute_tolerance > 0, "ode_absolute_tolerance", "must be positive",
          "keep the default 1e-12");
  require(boundary_tolerance >= 0 && boundary_tolerance < 1, "boundary_tolerance",
          "must be in [0, 1)", "keep the default 1e-3");
}

void RecordingOptions::validate() const {
  require(samples_per_period >= 0 && samples_per_period <= 100000, "samples_per_period",
          "must be between 0 and 100000", "use for example 64");
  require(flush_every_periods >= 1, "flush_every_periods", "must be at least 1",
          "flush for example every 1000 periods");
  for (const auto& w : windows)
    require(
        std::isfinite(w.start_s) && std::isfinite(w.end_s) && w.start_s >= 0 && w.end_s > w.start_s,
        "windows", "each window needs 0 <= start < end", "give windows as [start, end] in s");
}

std::string RunSummary::brief_report() const {
  std::ostringstream out;
  out << "run: " << to_string(end) << " (" << message << "), " << cycles << " periods, " << events
      << " events, " << configurations_built << " configurations built, " << wall_time_s << " s\n";
  out << "last period: mode " << to_string(last_cycle.mode);
  for (std::size_t k = 0; k < last_cycle.intervals.size() && k < 3; ++k)
    out << ", D" << k + 1 << " = " << last_cycle.intervals[k].fraction;
  out << "\n";
  for (std::size_t j = 0; j < recorded.size() && j < last_cycle.signals.size(); ++j) {
    const SignalStats& s = last_cycle.signals[j];
    out << "  " << recorded[j].name << ": average " << s.average << " " << recorded[j].unit()
        << ", rms " << s.rms << ", min " << s.min << ", max " << s.max << ", p-p "
        << s.peak_to_peak() << "\n";
  }
  return out.str();
}

}  // namespace pulsewise
