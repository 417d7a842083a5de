#include "pulsewise/hdf5_recorder.hpp"

#include <H5Cpp.h>

#include <algorithm>
#include <cmath>
#include <ctime>
#include <filesystem>
#include <limits>
#include <map>
#include <optional>
#include <stdexcept>

#include "h5_util.hpp"
#include "pulsewise/error.hpp"
#include "pulsewise/simulation.hpp"
#include "pulsewise/trace_file.hpp"
#include "trace_layout.hpp"
#include "waveform_sampler.hpp"

namespace pulsewise {

namespace h5 = detail::h5;
namespace layout = detail::layout;

void Hdf5Options::validate() const {
  const auto invalid = [](const char* field, const std::string& problem, const char* fix) {
    throw InputError(ErrorKind::kInvalidOption, field, problem, fix);
  };
  if (buffer_bytes < (std::size_t{64} << 10)) {
    invalid("buffer_bytes", "buffer of " + std::to_string(buffer_bytes) + " bytes is too small",
            "give at least 65536 bytes");
  }
  if (chunk_bytes < (std::size_t{4} << 10) || chunk_bytes > (std::size_t{1} << 20)) {
    invalid("chunk_bytes", "chunk size " + std::to_string(chunk_bytes) + " bytes is out of range",
            "give 4096 .. 1048576 bytes");
  }
  if (deflate_level < 0 || deflate_level > 9) {
    invalid("deflate_level", "deflate level " + std::to_string(deflate_level) + " is out of range",
            "give 0 (no compression) .. 9");
  }
}

namespace {

std::string utc_now() {
  const std::time_t now = std::time(nullptr);
  std::tm parts{};
  gmtime_r(&now, &parts);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &parts);
  return text;
}

void check_directory(const std::string& path) {
  const std::filesystem::path parent = std::filesystem::path(path).parent_path();
  std::error_code error;
  if (!parent.empty() && !std::filesystem::is_directory(parent, error)) {
    throw InputError(
        ErrorKind::kInvalidOption, "",
        "cannot create the trace file: directory '" + parent.string() + "' does not exist",
        "create the directory or give another output path", SourceLocation{path});
  }
}

// The buffered rows of the per-cycle table, one vector per dataset.
struct CycleRows {
  std::vector<std::int64_t> index, events;
  std::vector<double> start_time_s, energy_in_j, stored_energy_change_j, dissipated_j, state_change;
  std::vector<std::int8_t> mode;
  std::vector<std::int32_t> interval_count;
  std::vector<double> fractions;               // kIntervalColumns per row
  std::vector<std::uint64_t> patterns;         // kIntervalColumns per row
  std::vector<double> average, rms, min, max;  // signal_count per row

  std::size_t rows() const { return index.size(); }
  std::size_t bytes(std::size_t signals) const {
    return rows() * (8 * 8 + 1 + 4 + 16 * layout::kIntervalColumns + 32 * signals);
  }
};

struct EventRows {
  std::vector<double> time_s;
  std::vector<std::int8_t> kind;
  std::vector<std::int32_t> element, name_index;
  std::vector<std::uint64_t> pattern_after;
  std::vector<std::string> new_names;  // names first seen since the last write

  std::size_t rows() const { return time_s.size(); }
  std::size_t bytes() const { return rows() * 25; }
};

struct CycleDatasets {
  h5::AppendDataset index, start_time_s, mode, interval_count, fractions, patterns, events,
      energy_in_j, stored_energy_change_j, dissipated_j, state_change, average, rms, min, max;
};

struct EventDatasets {
  h5::AppendDataset time_s, kind, element, name_index, pattern_after, names;
};

template <class T>
void append_column(h5::AppendDataset& dataset, std::vector<T>& rows, std::size_t width,
                   const H5::DataType& type) {
  dataset.append(rows.data(), rows.size() / std::max<std::size_t>(width, 1), type);
  rows.clear();
}

}  // namespace

struct Hdf5Recorder::Impl {
  std::string path;
  RecordingOptions recording;
  TraceMetadata metadata;
  Hdf5Options options;
  h5::ChunkSettings chunks;
  std::optional<H5::H5File> file;
  std::string error;
  bool started = false;
  bool closed = false;
  std::size_t signal_count = 0;
  RunInfo run;

  detail::WaveformSampler sampler;
  detail::WaveformRows wave;
  h5::AppendDataset wave_time, wave_values;
  CycleRows cycles;
  CycleDatasets cycle_sets;
  EventRows events;
  EventDatasets event_sets;
  std::map<std::string, int> name_index;

  long cycles_seen = 0;
  long cycles_since_flush = 0;
  double until_s = 0.0;
  RecorderProgress progress;
  std::function<void(const RecorderProgress&)> listener;

  bool active() const { return file.has_value() && error.empty(); }
  void fail(const std::string& what, const std::string& detail);
  template <class Action>
  void guarded(const char* what, Action&& action);

  void create_file();
  void write_run_metadata(H5::Group& root);
  void create_layout(const std::vector<SignalInfo>& signals);
  void create_cycle_datasets(H5::Group& group);
  void create_event_datasets(H5::Group& group);
  void buffer_cycle(const CycleMetrics& cycle);
  void buffer_event(const EventRecord& event);
  std::size_t buffered_bytes() const;
  void check_budget();
  void commit();
  void write_buffers();
  void write_summary(const RunSummary& summary);
  void close_file();
};

void Hdf5Recorder::Impl::fail(const std::string& what, const std::string& detail) {
  if (error.empty()) error = "trace file '" + path + "': " + what + " failed: " + detail;
}

template <class Action>
void Hdf5Recorder::Impl::guarded(const char* what, Action&& action) {
  if (!active()) return;
  try {
    action();
  } catch (const H5::Exception& e) {
    fail(what, h5::message_of(e));
  } catch (const std::exception& e) {
    fail(what, e.what());
  }
}

void Hdf5Recorder::Impl::create_file() {
  check_directory(path);
  try {
    H5::FileAccPropList access;
    // The 1.8 format stores attributes larger than 64 KiB (a long circuit text); staying below the
    // 1.10 format keeps a file left by a killed run openable without clearing its status flags.
    access.setLibverBounds(H5F_LIBVER_V18, H5F_LIBVER_V18);
    file.emplace(path, H5F_ACC_TRUNC, H5::FileCreatPropList::DEFAULT, access);
    H5::Group root = file->openGroup("/");
    write_run_metadata(root);
    file->flush(H5F_SCOPE_GLOBAL);
  } catch (const H5::Exception& e) {
    file.reset();
    throw InputError(
        ErrorKind::kInvalidOption, "", "cannot create the trace file (" + h5::message_of(e) + ")",
        "check that the path is writable and not open in another program", SourceLocation{path});
  }
}

void Hdf5Recorder::Impl::write_run_metadata(H5::Group& root) {
  h5::write_attribute(root, "format", kTraceFormatName);
  h5::write_attribute(root, "format_version", std::int32_t{kTraceFormatVersion});
  h5::write_attribute(root, "program", "pulsewise");
  h5::write_attribute(root, "program_version", metadata.program_version);
  h5::write_attribute(root, "created_utc", utc_now());
  h5::write_attribute(root, "circuit_name", metadata.circuit_name);
  h5::write_attribute(root, "circuit_file", metadata.circuit_file);
  h5::write_attribute(root, "circuit_text", metadata.circuit_text);
  h5::write_attribute(root, "run_settings", metadata.run_settings);
  h5::write_attribute(root, "samples_per_period", std::int32_t{recording.samples_per_period});
  h5::write_attribute(root, "flush_every_periods", std::int64_t{recording.flush_every_periods});
  h5::write_attribute(root, "record_events", std::int8_t{recording.record_events});
  h5::write_attribute(root, "record_cycles", std::int8_t{recording.record_cycles});
  h5::write_attribute(root, layout::kComplete, std::int8_t{0});
  h5::write_attribute(root, layout::kFlushedCycles, std::int64_t{0});
  h5::write_attribute(root, layout::kFlushedUntil, std::numeric_limits<double>::quiet_NaN());
  H5::Group settings = root.createGroup(layout::kSettings);
  for (const auto& [key, value] : metadata.settings) h5::write_attribute(settings, key, value);
}

void Hdf5Recorder::Impl::create_layout(const std::vector<SignalInfo>& signals) {
  signal_count = signals.size();
  H5::Group root = file->openGroup("/");
  h5::write_attribute(root, "switching_period_s", run.switching_period_s);
  h5::write_attribute(root, "start_time_s", run.start_time_s);
  h5::write_attribute(root, "end_time_s", run.end_time_s);
  h5::write_attribute(root, "periods_requested", std::int64_t{run.periods});

  H5::Group signal_group = root.createGroup(layout::kSignals);
  std::vector<std::string> names, units;
  std::vector<std::int8_t> quantities;
  for (const SignalInfo& signal : signals) {
    names.push_back(signal.name);
    units.push_back(signal.unit());
    quantities.push_back(static_cast<std::int8_t>(signal.quantity));
  }
  h5::write_string_dataset(signal_group, "name", names);
  h5::write_string_dataset(signal_group, "unit", units);
  h5::AppendDataset quantity(signal_group, "quantity", layout::quantity_type(), 0, chunks);
  quantity.append(quantities.data(), quantities.size(), layout::quantity_type());

  H5::Group wave_group = root.createGroup(layout::kWaveforms);
  std::vector<double> windows;
  for (const RecordingWindow& w : detail::normalize_windows(recording.windows)) {
    windows.push_back(w.start_s);
    windows.push_back(w.end_s);
  }
  h5::write_attribute(wave_group, "windows", windows, 2);
  h5::write_attribute(wave_group, "samples_per_period", std::int32_t{recording.samples_per_period});
  h5::ChunkSettings wave_chunks = chunks;
  // Outside the windows a flush adds no rows; inside, the grid plus a few piece boundaries.
  wave_chunks.rows_per_flush = static_cast<std::size_t>(recording.flush_every_periods) *
                               static_cast<std::size_t>(recording.samples_per_period + 4);
  wave_time = h5::AppendDataset(wave_group, "time_s", H5::PredType::IEEE_F64LE, 0, wave_chunks);
  wave_values =
      h5::AppendDataset(wave_group, "values", H5::PredType::IEEE_F64LE, signal_count, wave_chunks);

  H5::Group cycle_group = root.createGroup(layout::kCycles);
  create_cycle_datasets(cycle_group);
  H5::Group event_group = root.createGroup(layout::kEvents);
  create_event_datasets(event_group);

  const double step =
      run.switching_period_s > 0.0 ? run.switching_period_s / recording.samples_per_period : 0.0;
  sampler = detail::WaveformSampler(recording.windows, run.start_time_s, step, signal_count);
  until_s = run.start_time_s;
  started = true;
}

void Hdf5Recorder::Impl::create_cycle_datasets(H5::Group& group) {
  h5::ChunkSettings chunks = this->chunks;
  chunks.rows_per_flush = static_cast<std::size_t>(recording.flush_every_periods);
  const auto f64 = H5::PredType::IEEE_F64LE;
  const std::size_t n = signal_count;
  const int d = layout::kIntervalColumns;
  CycleDatasets& c = cycle_sets;
  c.index = h5::AppendDataset(group, "index", H5::PredType::STD_I64LE, 0, chunks);
  c.start_time_s = h5::AppendDataset(group, "start_time_s", f64, 0, chunks);
  c.mode = h5::AppendDataset(group, "mode", layout::mode_type(), 0, chunks);
  c.interval_count = h5::AppendDataset(group, "interval_count", H5::PredType::STD_I32LE, 0, chunks);
  c.fractions = h5::AppendDataset(group, "fractions", f64, d, chunks);
  c.patterns = h5::AppendDataset(group, "patterns", H5::PredType::STD_U64LE, d, chunks);
  c.events = h5::AppendDataset(group, "events", H5::PredType::STD_I64LE, 0, chunks);
  c.energy_in_j = h5::AppendDataset(group, "energy_in_j", f64, 0, chunks);
  c.stored_energy_change_j = h5::AppendDataset(group, "stored_energy_change_j", f64, 0, chunks);
  c.dissipated_j = h5::AppendDataset(group, "dissipated_j", f64, 0, chunks);
  c.state_change = h5::AppendDataset(group, "state_change", f64, 0, chunks);
  c.average = h5::AppendDataset(group, "average", f64, n, chunks);
  c.rms = h5::AppendDataset(group, "rms", f64, n, chunks);
  c.min = h5::AppendDataset(group, "min", f64, n, chunks);
  c.max = h5::AppendDataset(group, "max", f64, n, chunks);
}

void Hdf5Recorder::Impl::create_event_datasets(H5::Group& group) {
  h5::ChunkSettings chunks = this->chunks;
  // A converter period has a few events (two gate edges, a diode turn-on and turn-off).
  chunks.rows_per_flush = 4 * static_cast<std::size_t>(recording.flush_every_periods);
  EventDatasets& e = event_sets;
  e.time_s = h5::AppendDataset(group, "time_s", H5::PredType::IEEE_F64LE, 0, chunks);
  e.kind = h5::AppendDataset(group, "kind", layout::event_kind_type(), 0, chunks);
  e.element = h5::AppendDataset(group, "element", H5::PredType::STD_I32LE, 0, chunks);
  e.name_index = h5::AppendDataset(group, "name_index", H5::PredType::STD_I32LE, 0, chunks);
  e.pattern_after = h5::AppendDataset(group, "pattern_after", H5::PredType::STD_U64LE, 0, chunks);
  h5::ChunkSettings small = chunks;
  small.rows_per_flush = 0;  // a few names, written once each
  e.names = h5::AppendDataset(group, "names", h5::utf8_string_type(), 0, small);
}

void Hdf5Recorder::Impl::buffer_cycle(const CycleMetrics& cycle) {
  CycleRows& c = cycles;
  c.index.push_back(cycle.index);
  c.start_time_s.push_back(cycle.start_time_s);
  c.mode.push_back(static_cast<std::int8_t>(cycle.mode));
  c.interval_count.push_back(static_cast<std::int32_t>(cycle.intervals.size()));
  for (std::size_t k = 0; k < static_cast<std::size_t>(layout::kIntervalColumns); ++k) {
    const bool present = k < cycle.intervals.size();
    c.fractions.push_back(present ? cycle.intervals[k].fraction : 0.0);
    c.patterns.push_back(present ? cycle.intervals[k].pattern : 0);
  }
  c.events.push_back(cycle.events);
  c.energy_in_j.push_back(cycle.energy_in_j);
  c.stored_energy_change_j.push_back(cycle.stored_energy_change_j);
  c.dissipated_j.push_back(cycle.dissipated_j);
  c.state_change.push_back(cycle.state_change);
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  for (std::size_t k = 0; k < signal_count; ++k) {
    // A cycle without stats for every signal is a programming error upstream; NaN keeps the
    // table rectangular and makes the gap visible.
    const bool present = k < cycle.signals.size();
    c.average.push_back(present ? cycle.signals[k].average : kNaN);
    c.rms.push_back(present ? cycle.signals[k].rms : kNaN);
    c.min.push_back(present ? cycle.signals[k].min : kNaN);
    c.max.push_back(present ? cycle.signals[k].max : kNaN);
  }
}

void Hdf5Recorder::Impl::buffer_event(const EventRecord& event) {
  auto [it, inserted] = name_index.try_emplace(event.element_name, 0);
  if (inserted) {
    it->second = static_cast<int>(name_index.size() - 1);
    events.new_names.push_back(event.element_name);
  }
  events.time_s.push_back(event.time_s);
  events.kind.push_back(static_cast<std::int8_t>(event.kind));
  events.element.push_back(event.element);
  events.name_index.push_back(it->second);
  events.pattern_after.push_back(event.pattern_after);
}

std::size_t Hdf5Recorder::Impl::buffered_bytes() const {
  return (wave.time_s.size() + wave.values.size()) * sizeof(double) + cycles.bytes(signal_count) +
         events.bytes();
}

void Hdf5Recorder::Impl::check_budget() {
  const std::size_t bytes = buffered_bytes();
  progress.peak_buffered_bytes = std::max(progress.peak_buffered_bytes, bytes);
  if (bytes >= options.buffer_bytes) commit();
}

void Hdf5Recorder::Impl::write_buffers() {
  const auto f64 = H5::PredType::NATIVE_DOUBLE;
  const auto i64 = H5::PredType::NATIVE_INT64;
  const auto i32 = H5::PredType::NATIVE_INT32;
  const auto u64 = H5::PredType::NATIVE_UINT64;
  const std::size_t n = signal_count;
  const std::size_t d = layout::kIntervalColumns;

  append_column(wave_values, wave.values, n, f64);
  append_column(wave_time, wave.time_s, 0, f64);

  CycleDatasets& cs = cycle_sets;
  CycleRows& c = cycles;
  append_column(cs.start_time_s, c.start_time_s, 0, f64);
  append_column(cs.mode, c.mode, 0, layout::mode_type());
  append_column(cs.interval_count, c.interval_count, 0, i32);
  append_column(cs.fractions, c.fractions, d, f64);
  append_column(cs.patterns, c.patterns, d, u64);
  append_column(cs.events, c.events, 0, i64);
  append_column(cs.energy_in_j, c.energy_in_j, 0, f64);
  append_column(cs.stored_energy_change_j, c.stored_energy_change_j, 0, f64);
  append_column(cs.dissipated_j, c.dissipated_j, 0, f64);
  append_column(cs.state_change, c.state_change, 0, f64);
  append_column(cs.average, c.average, n, f64);
  append_column(cs.rms, c.rms, n, f64);
  append_column(cs.min, c.min, n, f64);
  append_column(cs.max, c.max, n, f64);
  // The index goes last: a reader takes the shortest column as the row count.
  append_column(cs.index, c.index, 0, i64);

  EventDatasets& es = event_sets;
  EventRows& e = events;
  if (!e.new_names.empty()) {
    std::vector<const char*> pointers;
    for (const std::string& name : e.new_names) pointers.push_back(name.c_str());
    es.names.append(pointers.data(), pointers.size(), h5::utf8_string_type());
    e.new_names.clear();
  }
  append_column(es.kind, e.kind, 0, layout::event_kind_type());
  append_column(es.element, e.element, 0, i32);
  append_column(es.name_index, e.name_index, 0, i32);
  append_column(es.pattern_after, e.pattern_after, 0, u64);
  append_column(es.time_s, e.time_s, 0, f64);
}

void Hdf5Recorder::Impl::commit() {
  guarded("writing the trace", [&] {
    if (started) {
      sampler.emit_pending(wave);
      write_buffers();
    }
    H5::Group root = file->openGroup("/");
    h5::write_attribute(root, layout::kFlushedCycles, std::int64_t{cycles_seen});
    h5::write_attribute(root, layout::kFlushedUntil, until_s);
    file->flush(H5F_SCOPE_GLOBAL);
    cycles_since_flush = 0;
    ++progress.flushes;
    progress.cycles_flushed = cycles_seen;
    progress.flushed_until_s = until_s;
    progress.waveform_rows = static_cast<long>(wave_time.rows());
    progress.cycle_rows = static_cast<long>(cycle_sets.index.rows());
    progress.event_rows = static_cast<long>(event_sets.time_s.rows());
  });
  if (active() && listener) listener(progress);
}

void Hdf5Recorder::Impl::write_summary(const RunSummary& summary) {
  H5::Group group = file->createGroup(layout::kSummary);
  h5::write_attribute(group, "end", layout::run_end_name(summary.end));
  h5::write_attribute(group, "message", summary.message);
  h5::write_attribute(group, "cycles", std::int64_t{summary.cycles});
  h5::write_attribute(group, "events", std::int64_t{summary.events});
  h5::write_attribute(group, "configurations_built",
                      static_cast<std::int64_t>(summary.configurations_built));
  h5::write_attribute(group, "cache_hits", static_cast<std::int64_t>(summary.cache_hits));
  h5::write_attribute(group, "wall_time_s", summary.wall_time_s);
  h5::write_attribute(group, "end_time_s", summary.end_time_s);
  std::vector<std::string> names;
  for (const SignalInfo& signal : summary.recorded) names.push_back(signal.name);
  h5::write_attribute(group, "signals", names);
  h5::write_attribute(group, "state_names", summary.state_names);
  h5::write_attribute(group, "final_state",
                      std::vector<double>(summary.final_state.data(),
                                          summary.final_state.data() + summary.final_state.size()));

  const CycleMetrics& last = summary.last_cycle;
  H5::Group cycle = file->createGroup(layout::kLastCycle);
  h5::write_attribute(cycle, "index", std::int64_t{last.index});
  h5::write_attribute(cycle, "start_time_s", last.start_time_s);
  h5::write_attribute(cycle, "mode", layout::mode_name(last.mode));
  std::vector<double> fractions, average, rms, min, max;
  for (const ConfigurationInterval& interval : last.intervals)
    fractions.push_back(interval.fraction);
  for (const SignalStats& stats : last.signals) {
    average.push_back(stats.average);
    rms.push_back(stats.rms);
    min.push_back(stats.min);
    max.push_back(stats.max);
  }
  h5::write_attribute(cycle, "fractions", fractions);
  h5::write_attribute(cycle, "events", std::int64_t{last.events});
  h5::write_attribute(cycle, "energy_in_j", last.energy_in_j);
  h5::write_attribute(cycle, "stored_energy_change_j", last.stored_energy_change_j);
  h5::write_attribute(cycle, "dissipated_j", last.dissipated_j);
  h5::write_attribute(cycle, "state_change", last.state_change);
  h5::write_attribute(cycle, "average", average);
  h5::write_attribute(cycle, "rms", rms);
  h5::write_attribute(cycle, "min", min);
  h5::write_attribute(cycle, "max", max);

  const StartupMetrics& startup = summary.startup;
  H5::Group start = file->createGroup(layout::kStartup);
  h5::write_attribute(start, "inductors", startup.inductors);
  h5::write_attribute(start, "peak_inductor_current_a", startup.peak_inductor_current_a);
  h5::write_attribute(start, "output_peak", startup.output_peak);
  h5::write_attribute(start, "overshoot", startup.overshoot);
  h5::write_attribute(start, "settling_cycle", std::int64_t{startup.settling_cycle});
  h5::write_attribute(start, "steady_state_cycle", std::int64_t{startup.steady_state_cycle});
}

void Hdf5Recorder::Impl::close_file() {
  if (closed) return;
  closed = true;
  if (!file) return;
  commit();
  try {
    // The file stays open (and locked) while any of its datasets is open.
    wave_time = {};
    wave_values = {};
    cycle_sets = {};
    event_sets = {};
    file->close();
  } catch (const H5::Exception& e) {
    fail("closing the file", h5::message_of(e));
  }
  file.reset();
}

Hdf5Recorder::Hdf5Recorder(std::string path, RecordingOptions recording, TraceMetadata metadata,
                           Hdf5Options options)
    : impl_(std::make_unique<Impl>()) {
  h5::silence_hdf5_errors();
  recording.validate();
  options.validate();
  impl_->path = std::move(path);
  impl_->recording = std::move(recording);
  impl_->metadata = std::move(metadata);
  impl_->options = options;
  impl_->chunks = h5::ChunkSettings{options.chunk_bytes, options.deflate_level};
  impl_->create_file();
}

Hdf5Recorder::~Hdf5Recorder() {
  try {
    impl_->close_file();
  } catch (...) {
    // A destructor must not throw; close() is the place to learn about failures.
  }
}

void Hdf5Recorder::on_start(const RunInfo& info) {
  Impl& m = *impl_;
  if (m.started) {
    m.fail("starting a second run", "a recorder records one run; make a new recorder per run");
    return;
  }
  m.guarded("creating the datasets", [&] {
    m.run = info;
    m.create_layout(info.recorded);
  });
  m.commit();
}

void Hdf5Recorder::on_piece(const PieceView& piece) {
  Impl& m = *impl_;
  if (!m.active() || !m.started) return;
  m.guarded("sampling the waveforms", [&] { m.sampler.add_piece(piece, m.wave); });
  m.until_s = std::max(m.until_s, piece.t_end());
  m.check_budget();
}

void Hdf5Recorder::on_event(const EventRecord& event) {
  Impl& m = *impl_;
  if (!m.active() || !m.started || !m.recording.record_events) return;
  m.guarded("buffering an event", [&] { m.buffer_event(event); });
  m.check_budget();
}

void Hdf5Recorder::on_cycle(const CycleMetrics& cycle) {
  Impl& m = *impl_;
  if (!m.active() || !m.started) return;
  if (m.recording.record_cycles) m.guarded("buffering a cycle", [&] { m.buffer_cycle(cycle); });
  ++m.cycles_seen;
  if (++m.cycles_since_flush >= m.recording.flush_every_periods) {
    m.commit();
  } else {
    m.check_budget();
  }
}

void Hdf5Recorder::on_finish(const RunSummary& summary) {
  Impl& m = *impl_;
  if (!m.active()) return;
  if (!m.started) {
    // The run ended before it started (e.g. an inconsistent first configuration): keep the
    // layout complete so that readers need no special case.
    m.guarded("creating the datasets", [&] { m.create_layout(summary.recorded); });
  }
  m.commit();
  m.guarded("writing the summary", [&] {
    m.write_summary(summary);
    H5::Group root = m.file->openGroup("/");
    h5::write_attribute(root, layout::kComplete, std::int8_t{1});
  });
  m.close_file();
}

void Hdf5Recorder::flush() {
  if (impl_->active()) impl_->commit();
}

void Hdf5Recorder::close() {
  impl_->close_file();
  if (!impl_->error.empty()) throw std::runtime_error(impl_->error);
}

bool Hdf5Recorder::ok() const { return impl_->error.empty(); }
const std::string& Hdf5Recorder::error() const { return impl_->error; }
const std::string& Hdf5Recorder::path() const { return impl_->path; }
RecorderProgress Hdf5Recorder::progress() const { return impl_->progress; }

void Hdf5Recorder::set_flush_listener(std::function<void(const RecorderProgress&)> listener) {
  impl_->listener = std::move(listener);
}

}  // namespace pulsewise
