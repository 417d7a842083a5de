// `pulsewise run FILE`: load a circuit file, simulate it with the trace recorder attached, print
// the summary (text or JSON).
#include <fmt/core.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <memory>

#include "commands.hpp"
#include "exit_codes.hpp"
#include "progress.hpp"
#include "pulsewise/circuit_file.hpp"
#include "pulsewise/hdf5_recorder.hpp"
#include "pulsewise/simulation.hpp"
#include "run_report.hpp"

namespace pulsewise::app {
namespace fs = std::filesystem;
namespace {

void require_readable_file(const std::string& path, const char* what) {
  std::error_code ec;
  if (!fs::exists(path, ec)) {
    throw UsageError(fmt::format("{}: no such file; check the path of the {}", path, what));
  }
  if (fs::is_directory(path, ec)) {
    throw UsageError(fmt::format("{}: is a directory, not a {}", path, what));
  }
}

std::string choose_trace_path(const RunCommandOptions& options, const CircuitFile& file) {
  if (!options.trace_path.empty()) return options.trace_path;
  if (!file.recording.output_path.empty()) return file.recording.output_path;
  return fs::path(options.circuit_path).replace_extension(".h5").string();
}

// The recorder reports a file it cannot create as bad input; the driver tells apart a directory
// that is not there (bad input) from one that refuses the file (I/O error) before it starts.
void require_writable(const std::string& path) {
  const fs::path parent = fs::path(path).parent_path();
  std::error_code ec;
  if (!parent.empty() && !fs::is_directory(parent, ec)) {
    throw UsageError(
        fmt::format("{}: directory {} does not exist; create it or choose another "
                    "trace file with -o",
                    path, parent.string()));
  }
  if (fs::is_directory(path, ec)) {
    throw UsageError(fmt::format("{}: is a directory; give a file name with -o", path));
  }
  const bool existed = fs::exists(path, ec);
  std::ofstream probe(path, std::ios::app | std::ios::binary);
  if (!probe) {
    throw IoError(fmt::format("{}: cannot write the trace file: {}", path, std::strerror(errno)));
  }
  probe.close();
  if (!existed) fs::remove(path, ec);
}

std::string settings_text(const SimulationOptions& s, const RecordingOptions& r) {
  std::string text = fmt::format(
      "periods = {}\nswitching_period_s = {}\nstop_at_steady_state = {}\nsubsteps_per_period = "
      "{}\nsamples_per_period = {}\n",
      s.periods, s.switching_period_s, s.stop_at_steady_state, s.substeps_per_period,
      r.samples_per_period);
  for (const RecordingWindow& w : r.windows) {
    text += fmt::format("window = [{}, {}]\n", w.start_s, w.end_s);
  }
  return text;
}

TraceMetadata metadata_for(const CircuitFile& file) {
  TraceMetadata m;
  m.circuit_name = file.circuit.name();
  m.circuit_file = file.path;
  m.circuit_text = file.text;
  m.run_settings = settings_text(file.simulation, file.recording);
  m.settings = {
      {"periods", std::to_string(file.simulation.periods)},
      {"switching_period_s", fmt::format("{}", file.simulation.switching_period_s)},
      {"stop_at_steady_state", file.simulation.stop_at_steady_state ? "true" : "false"},
      {"samples_per_period", std::to_string(file.recording.samples_per_period)},
  };
  return m;
}

RunReport make_report(const RunCommandOptions& options, const CircuitFile& file,
                      const Simulation& simulation, const std::string& trace_path,
                      RunSummary summary) {
  RunReport report;
  report.input_path = options.circuit_path;
  report.circuit_name = file.circuit.name();
  report.trace_path = trace_path;
  report.switching_period_s = simulation.options().switching_period_s > 0.0
                                  ? simulation.options().switching_period_s
                                  : file.circuit.first_modulator_period_s();
  report.output_signal = simulation.options().output_signal;
  report.settling_band = simulation.options().settling_band;
  for (const ConfigurationInterval& interval : summary.last_cycle.intervals) {
    report.interval_patterns.push_back(simulation.describe(interval.pattern));
  }
  report.power =
      power_balance(file.circuit, summary, report.switching_period_s, report.output_signal);
  report.summary = std::move(summary);
  return report;
}

}  // namespace

void RunCommandOptions::validate() const {
  if (circuit_path.empty()) throw UsageError("run: give a circuit file: pulsewise run FILE");
  if (periods && *periods < 1) {
    throw UsageError(fmt::format("--periods {}: give at least 1 period", *periods));
  }
}

int run_command(const RunCommandOptions& options) {
  options.validate();
  require_readable_file(options.circuit_path, "circuit file");
  CircuitFile file = load_circuit_file(options.circuit_path);
  if (options.periods) file.simulation.periods = *options.periods;
  Simulation simulation(file.circuit, file.simulation);

  std::string trace_path;
  std::unique_ptr<Hdf5Recorder> recorder;
  if (options.write_trace) {
    trace_path = choose_trace_path(options, file);
    require_writable(trace_path);
    recorder = std::make_unique<Hdf5Recorder>(trace_path, file.recording, metadata_for(file));
  }
  ProgressLine progress;
  ObserverFanOut observers;
  observers.add(recorder.get());
  if (!options.quiet && ProgressLine::is_terminal(stderr)) observers.add(&progress);

  // No observer at all when nothing listens. The progress line takes periods only, so it does not
  // keep the engine from replaying and repeating periods; the trace recorder takes every piece.
  RunSummary summary = simulation.run(observers.empty() ? nullptr : &observers);
  if (recorder) {
    try {
      recorder->close();
    } catch (const std::exception& e) {
      throw IoError(fmt::format("writing the trace file failed: {}", e.what()));
    }
  }
  const RunReport report = make_report(options, file, simulation, trace_path, std::move(summary));
  if (options.json) {
    fmt::print("{}\n", run_report_json(report).dump(2));
  } else {
    print_run_report(report);
  }
  return report.summary.ok() ? kExitOk : kExitAbnormalEnd;
}

}  // namespace pulsewise::app
