// Reading trace files written by Hdf5Recorder (layout in docs/trace-file.md): what a file holds
// (read_trace_info, describe), its rows in blocks (TraceFile), and export to CSV (export_csv).
// Anything that is not a readable trace (missing, not HDF5, another HDF5 file, damaged) gives an
// InputError naming the file; nothing here crashes on a bad file. Files of runs that were killed
// open normally and hold every period flushed before the kill.
#pragma once

#include <cstddef>
#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "pulsewise/configuration_model.hpp"
#include "pulsewise/observer.hpp"
#include "pulsewise/recording.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise {

inline constexpr const char* kTraceFormatName = "pulsewise-trace";
inline constexpr int kTraceFormatVersion = 1;  // bumped when a reader of 1 could misread a file

struct TraceSignal {
  std::string name;  // "<node>.v", "<element>.v" or "<element>.i"
  std::string unit;  // "V" or "A"
  SignalQuantity quantity = SignalQuantity::kVoltage;
};

// What a trace file holds.
struct TraceInfo {
  std::string path;
  int format_version = 0;
  std::string program_version;
  std::string created_utc;  // ISO 8601, UTC
  std::string circuit_name;
  std::string circuit_file;
  std::string circuit_text;
  std::string run_settings;
  std::vector<std::pair<std::string, std::string>> settings;
  double switching_period_s = 0.0;
  double start_time_s = 0.0;  // run start, s
  double end_time_s = 0.0;    // end of the run as asked for, s
  long periods_requested = 0;
  int samples_per_period = 0;
  long flush_every_periods = 0;
  std::vector<RecordingWindow> windows;  // merged and sorted; empty: the whole run
  std::vector<TraceSignal> signals;
  long waveform_rows = 0;
  long cycle_rows = 0;
  long event_rows = 0;
  // Time of the first and last waveform row, s; NaN without rows.
  double waveform_first_s = std::numeric_limits<double>::quiet_NaN();
  double waveform_last_s = std::numeric_limits<double>::quiet_NaN();
  bool complete = false;  // the run finished and the recorder closed the file
  long flushed_cycles = 0;
  double flushed_until_s = 0.0;
  std::optional<RunSummary> summary;  // present when the run finished
  std::vector<std::string> warnings;  // inconsistencies the reader worked around
};

// A block of waveform rows. At an instant where a signal jumps there are two rows with the same
// time: the value just before, then the value just after.
struct WaveformBlock {
  long first_row = 0;
  std::size_t signal_count = 0;
  std::vector<double> time_s;  // one per row
  std::vector<double> values;  // row-major: values[row * signal_count + signal]

  std::size_t rows() const { return time_s.size(); }
  double value(std::size_t row, std::size_t signal) const {
    return values[row * signal_count + signal];
  }
};

class TraceFile {
 public:
  // Opens the file read-only and reads its description. Throws InputError naming the file.
  explicit TraceFile(const std::string& path);
  ~TraceFile();
  TraceFile(TraceFile&&) noexcept;
  TraceFile& operator=(TraceFile&&) noexcept;

  const TraceInfo& info() const;
  // Index of a signal by name, or -1.
  int find_signal(const std::string& name) const;

  // Rows [first, first + count), clipped to what the file holds. Throws InputError naming the
  // file when the rows cannot be read (a damaged file).
  WaveformBlock read_waveforms(long first, long count) const;
  // Cycle rows; CycleMetrics::intervals holds at most the first three intervals (D1, D2, D3).
  std::vector<CycleMetrics> read_cycles(long first, long count) const;
  std::vector<EventRecord> read_events(long first, long count) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Shorthand for TraceFile(path).info().
TraceInfo read_trace_info(const std::string& path);

// A few lines a person reads at a glance: signals, counts, time span, how the run ended.
std::string describe(const TraceInfo& info);

// Options of the CSV export.
struct ExportOptions {
  bool waveforms = true;  // write waveforms.csv
  bool cycles = true;     // write cycles.csv
  bool events = true;     // write events.csv
  // Only rows inside [start_s, end_s]: waveform and event times, cycle start times, s.
  double start_s = -std::numeric_limits<double>::infinity();
  double end_s = std::numeric_limits<double>::infinity();
  // Only these signals, by name, in this order. Empty: every recorded signal.
  std::vector<std::string> signals;
  // Significant digits of numbers, 1..17. 0: the shortest text that reads back to the same double.
  int precision = 0;

  // Throws InputError (kInvalidOption) naming the field and the fix.
  void validate() const;
};

struct ExportResult {
  std::vector<std::string> files;  // paths written
  long waveform_rows = 0;
  long cycle_rows = 0;
  long event_rows = 0;
};

// Writes waveforms.csv, cycles.csv and events.csv (as selected) into out_dir, creating it if
// needed; streams in blocks, so any file size exports in bounded memory. Throws InputError for an
// unreadable trace, an unknown signal name or an output directory that cannot be written.
ExportResult export_csv(const std::string& trace_path, const std::string& out_dir,
                        const ExportOptions& options = {});

}  // namespace pulsewise
