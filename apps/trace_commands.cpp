// `pulsewise export TRACES.h5` and `pulsewise info TRACES.h5`: thin wrappers over the trace reader.
#include <fmt/core.h>

#include <filesystem>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "exit_codes.hpp"
#include "pulsewise/trace_file.hpp"

namespace pulsewise::app {
namespace fs = std::filesystem;
namespace {

void require_trace_file(const std::string& path) {
  std::error_code ec;
  if (path.empty()) throw UsageError("give a trace file (.h5) written by `pulsewise run`");
  if (!fs::exists(path, ec)) {
    throw UsageError(
        fmt::format("{}: no such file; give a trace file written by `pulsewise run`", path));
  }
  if (fs::is_directory(path, ec)) throw UsageError(fmt::format("{}: is a directory", path));
}

// The reader reports an output directory it cannot write as bad input; a directory the system
// refuses to create is an I/O error, told apart here before the export starts.
void prepare_out_dir(const std::string& dir) {
  std::error_code ec;
  if (fs::exists(dir, ec) && !fs::is_directory(dir, ec)) {
    throw UsageError(fmt::format("{}: exists and is not a directory; give another -d", dir));
  }
  fs::create_directories(dir, ec);
  if (ec) throw IoError(fmt::format("{}: cannot create the directory: {}", dir, ec.message()));
  if (!fs::is_directory(dir, ec)) throw UsageError(fmt::format("{}: is not a directory", dir));
}

nlohmann::json info_json(const TraceInfo& info) {
  nlohmann::json signals = nlohmann::json::array();
  for (const TraceSignal& s : info.signals) signals.push_back({{"name", s.name}, {"unit", s.unit}});
  nlohmann::json windows = nlohmann::json::array();
  for (const RecordingWindow& w : info.windows) windows.push_back({w.start_s, w.end_s});
  nlohmann::json out = {{"path", info.path},
                        {"format_version", info.format_version},
                        {"program_version", info.program_version},
                        {"created_utc", info.created_utc},
                        {"circuit_name", info.circuit_name},
                        {"circuit_file", info.circuit_file},
                        {"switching_period_s", info.switching_period_s},
                        {"periods_requested", info.periods_requested},
                        {"samples_per_period", info.samples_per_period},
                        {"windows", windows},
                        {"signals", signals},
                        {"waveform_rows", info.waveform_rows},
                        {"cycle_rows", info.cycle_rows},
                        {"event_rows", info.event_rows},
                        {"complete", info.complete},
                        {"flushed_cycles", info.flushed_cycles},
                        {"warnings", info.warnings}};
  if (info.summary) {
    out["end"] = to_string(info.summary->end);
    out["cycles"] = info.summary->cycles;
  }
  return out;
}

}  // namespace

int export_command(const ExportCommandOptions& options) {
  require_trace_file(options.trace_path);
  std::string out_dir = options.out_dir;
  if (out_dir.empty()) {
    const fs::path trace(options.trace_path);
    out_dir = (trace.parent_path() / (trace.stem().string() + "-csv")).string();
  }
  read_trace_info(options.trace_path);  // a bad trace file is reported before anything is created
  prepare_out_dir(out_dir);
  const ExportResult result = export_csv(options.trace_path, out_dir);
  if (!options.quiet) {
    for (const std::string& f : result.files) fmt::print("wrote {}\n", f);
    fmt::print("{} waveform rows, {} cycle rows, {} event rows\n", result.waveform_rows,
               result.cycle_rows, result.event_rows);
  }
  return kExitOk;
}

int info_command(const InfoCommandOptions& options) {
  require_trace_file(options.trace_path);
  const TraceInfo info = read_trace_info(options.trace_path);
  if (options.json) {
    fmt::print("{}\n", info_json(info).dump(2));
  } else {
    fmt::print("{}", describe(info));
    if (!describe(info).ends_with('\n')) fmt::print("\n");
  }
  return kExitOk;
}

}  // namespace pulsewise::app
