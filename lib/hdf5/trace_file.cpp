#include "pulsewise/trace_file.hpp"

#include <H5Cpp.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <limits>
#include <optional>

#include "h5_util.hpp"
#include "pulsewise/error.hpp"
#include "trace_layout.hpp"

namespace pulsewise {

namespace h5 = detail::h5;
namespace layout = detail::layout;

namespace {

constexpr const char* kTraceFix =
    "give a trace file written by pulsewise (the .h5 file of a run with recording on)";

[[noreturn]] void bad_file(const std::string& path, const std::string& problem,
                           const std::string& fix = kTraceFix) {
  throw InputError(ErrorKind::kFileSyntax, "", problem, fix, SourceLocation{path});
}

[[noreturn]] void damaged(const std::string& path, const std::string& what,
                          const H5::Exception& error) {
  bad_file(path,
           "the trace file is damaged or truncated: " + what + " (" + h5::message_of(error) + ")",
           "rerun the simulation to write the file again");
}

bool has_link(const H5::Group& group, const std::string& name) {
  // H5Lexists fails (rather than answering false) when an intermediate group is missing.
  return H5Lexists(group.getId(), name.c_str(), H5P_DEFAULT) > 0;
}

std::string string_or(const H5::H5Object& object, const char* name, std::string fallback = {}) {
  return h5::read_string_attribute(object, name).value_or(std::move(fallback));
}

double double_or(const H5::H5Object& object, const char* name, double fallback) {
  return h5::read_double_attribute(object, name).value_or(fallback);
}

long long_or(const H5::H5Object& object, const char* name, long fallback) {
  return static_cast<long>(h5::read_int_attribute(object, name).value_or(fallback));
}

std::vector<double> doubles_or_empty(const H5::H5Object& object, const char* name) {
  return h5::read_double_array_attribute(object, name).value_or(std::vector<double>{});
}

std::vector<RecordingWindow> read_windows(const H5::Group& waves) {
  std::size_t columns = 0;
  const std::vector<double> flat =
      h5::read_double_array_attribute(waves, "windows", &columns).value_or(std::vector<double>{});
  std::vector<RecordingWindow> windows;
  if (columns != 2) return windows;
  for (std::size_t k = 0; k + 1 < flat.size(); k += 2) {
    // The whole run is stored as one window from -inf to +inf.
    if (std::isinf(flat[k]) && std::isinf(flat[k + 1])) continue;
    windows.push_back(RecordingWindow{flat[k], flat[k + 1]});
  }
  return windows;
}

ConductionMode mode_from_name(const std::string& name) {
  for (ConductionMode mode : {ConductionMode::kNone, ConductionMode::kCcm, ConductionMode::kDcm,
                              ConductionMode::kBoundary}) {
    if (name == layout::mode_name(mode)) return mode;
  }
  return ConductionMode::kNone;
}

CycleMetrics read_last_cycle(const H5::Group& group) {
  CycleMetrics last;
  last.index = long_or(group, "index", 0);
  last.start_time_s = double_or(group, "start_time_s", 0.0);
  last.mode = mode_from_name(string_or(group, "mode"));
  for (double fraction : doubles_or_empty(group, "fractions")) {
    last.intervals.push_back(ConfigurationInterval{0, fraction});
  }
  last.events = long_or(group, "events", 0);
  last.energy_in_j = double_or(group, "energy_in_j", 0.0);
  last.stored_energy_change_j = double_or(group, "stored_energy_change_j", 0.0);
  last.dissipated_j = double_or(group, "dissipated_j", 0.0);
  last.state_change = double_or(group, "state_change", 0.0);
  const std::vector<double> average = doubles_or_empty(group, "average");
  const std::vector<double> rms = doubles_or_empty(group, "rms");
  const std::vector<double> min = doubles_or_empty(group, "min");
  const std::vector<double> max = doubles_or_empty(group, "max");
  const std::size_t n = std::min({average.size(), rms.size(), min.size(), max.size()});
  for (std::size_t k = 0; k < n; ++k) last.signals.push_back({average[k], rms[k], min[k], max[k]});
  return last;
}

}  // namespace

struct TraceFile::Impl {
  std::string path;
  std::optional<H5::H5File> file;
  TraceInfo info;
  std::vector<std::string> event_names;

  void open();
  void read_info();
  void read_signals(const H5::Group& root);
  void read_counts();
  void read_summary(const H5::Group& root);
  std::size_t shortest(const char* group, std::initializer_list<const char*> names);
  H5::DataSet dataset(const std::string& name) const { return file->openDataSet(name); }
};

void TraceFile::Impl::open() {
  std::error_code error;
  if (!std::filesystem::exists(path, error)) {
    bad_file(path, "the trace file does not exist", "check the path");
  }
  if (std::filesystem::is_directory(path, error)) {
    bad_file(path, "this is a directory, not a trace file");
  }
  if (H5Fis_hdf5(path.c_str()) <= 0) {
    H5Eclear2(H5E_DEFAULT);
    bad_file(path, "this is not an HDF5 file, so not a pulsewise trace");
  }
  try {
    file.emplace(path, H5F_ACC_RDONLY);
  } catch (const H5::Exception& e) {
    damaged(path, "it cannot be opened", e);
  }
  try {
    read_info();
  } catch (const H5::Exception& e) {
    damaged(path, "its description cannot be read", e);
  }
}

void TraceFile::Impl::read_info() {
  const H5::Group root = file->openGroup("/");
  const std::optional<std::string> format = h5::read_string_attribute(root, "format");
  if (!format || *format != kTraceFormatName) {
    bad_file(path, std::string("this HDF5 file is not a pulsewise trace (its root attribute "
                               "'format' is not '") +
                       kTraceFormatName + "')");
  }
  info.path = path;
  info.format_version = static_cast<int>(long_or(root, "format_version", 0));
  if (info.format_version < 1 || info.format_version > kTraceFormatVersion) {
    bad_file(path,
             "trace format version " + std::to_string(info.format_version) +
                 " is not one this reader knows (1 .. " + std::to_string(kTraceFormatVersion) + ")",
             "read it with the pulsewise version that wrote it (" +
                 string_or(root, "program_version", "unknown") + ")");
  }
  info.program_version = string_or(root, "program_version");
  info.created_utc = string_or(root, "created_utc");
  info.circuit_name = string_or(root, "circuit_name");
  info.circuit_file = string_or(root, "circuit_file");
  info.circuit_text = string_or(root, "circuit_text");
  info.run_settings = string_or(root, "run_settings");
  info.switching_period_s = double_or(root, "switching_period_s", 0.0);
  info.start_time_s = double_or(root, "start_time_s", 0.0);
  info.end_time_s = double_or(root, "end_time_s", 0.0);
  info.periods_requested = long_or(root, "periods_requested", 0);
  info.samples_per_period = static_cast<int>(long_or(root, "samples_per_period", 0));
  info.flush_every_periods = long_or(root, "flush_every_periods", 0);
  info.complete = long_or(root, layout::kComplete, 0) != 0;
  info.flushed_cycles = long_or(root, layout::kFlushedCycles, 0);
  info.flushed_until_s =
      double_or(root, layout::kFlushedUntil, std::numeric_limits<double>::quiet_NaN());
  if (has_link(root, layout::kSettings)) {
    const H5::Group settings = file->openGroup(layout::kSettings);
    for (int k = 0; k < settings.getNumAttrs(); ++k) {
      const std::string name = settings.openAttribute(static_cast<unsigned>(k)).getName();
      info.settings.emplace_back(name, string_or(settings, name.c_str()));
    }
  }
  if (!has_link(root, "signals")) {
    info.warnings.push_back("the run had not started when the file was last flushed");
    return;
  }
  read_signals(root);
  read_counts();
  read_summary(root);
}

void TraceFile::Impl::read_signals(const H5::Group& root) {
  const std::vector<std::string> names = h5::read_string_dataset(dataset("/signals/name"));
  const std::vector<std::string> units = h5::read_string_dataset(dataset("/signals/unit"));
  const H5::DataSet quantity = dataset("/signals/quantity");
  std::vector<std::int8_t> quantities(h5::row_count(quantity));
  h5::read_rows(quantity, 0, quantities.size(), layout::quantity_type(), quantities.data());
  if (units.size() != names.size() || quantities.size() != names.size()) {
    bad_file(path, "the trace file is damaged: /signals/name, unit and quantity differ in length",
             "rerun the simulation to write the file again");
  }
  for (std::size_t k = 0; k < names.size(); ++k) {
    info.signals.push_back(
        TraceSignal{names[k], units[k],
                    quantities[k] == static_cast<std::int8_t>(SignalQuantity::kCurrent)
                        ? SignalQuantity::kCurrent
                        : SignalQuantity::kVoltage});
  }
  info.windows = read_windows(file->openGroup(layout::kWaveforms));
  if (has_link(root, "events/names"))
    event_names = h5::read_string_dataset(dataset("/events/names"));
}

std::size_t TraceFile::Impl::shortest(const char* group, std::initializer_list<const char*> names) {
  std::size_t rows = std::numeric_limits<std::size_t>::max();
  std::size_t longest = 0;
  for (const char* name : names) {
    const std::size_t n = h5::row_count(dataset(std::string(group) + "/" + name));
    rows = std::min(rows, n);
    longest = std::max(longest, n);
  }
  if (rows != longest) {
    info.warnings.push_back(std::string("the datasets of ") + group +
                            " differ in length (the run was stopped while writing); using the " +
                            std::to_string(rows) + " rows they all hold");
  }
  return rows;
}

void TraceFile::Impl::read_counts() {
  // A run with no recorded signals has empty per-signal datasets; only the others count rows.
  const bool signals = !info.signals.empty();
  const std::size_t columns = h5::column_count(dataset("/waveforms/values"));
  if (signals && columns != info.signals.size()) {
    bad_file(path,
             "the trace file is damaged: /waveforms/values has " + std::to_string(columns) +
                 " columns for " + std::to_string(info.signals.size()) + " signals",
             "rerun the simulation to write the file again");
  }
  info.waveform_rows =
      static_cast<long>(signals ? shortest(layout::kWaveforms, {"time_s", "values"})
                                : shortest(layout::kWaveforms, {"time_s"}));
  const std::initializer_list<const char*> cycle_columns = {
      "index",       "start_time_s", "mode",        "interval_count",         "fractions",
      "patterns",    "events",       "energy_in_j", "stored_energy_change_j", "dissipated_j",
      "state_change"};
  std::size_t cycle_rows = shortest(layout::kCycles, cycle_columns);
  if (signals) {
    cycle_rows = std::min(cycle_rows, shortest(layout::kCycles, {"average", "rms", "min", "max"}));
  }
  info.cycle_rows = static_cast<long>(cycle_rows);
  info.event_rows = static_cast<long>(
      shortest(layout::kEvents, {"time_s", "kind", "element", "name_index", "pattern_after"}));
  if (info.waveform_rows > 0) {
    const H5::DataSet time = dataset("/waveforms/time_s");
    h5::read_rows(time, 0, 1, H5::PredType::NATIVE_DOUBLE, &info.waveform_first_s);
    h5::read_rows(time, static_cast<std::size_t>(info.waveform_rows - 1), 1,
                  H5::PredType::NATIVE_DOUBLE, &info.waveform_last_s);
  }
}

void TraceFile::Impl::read_summary(const H5::Group& root) {
  if (!has_link(root, "summary")) return;
  const H5::Group group = file->openGroup(layout::kSummary);
  RunSummary summary;
  const std::string end = string_or(group, "end");
  const std::optional<RunEnd> parsed = layout::run_end_from_name(end);
  if (!parsed) info.warnings.push_back("unknown run end '" + end + "' in /summary");
  summary.end = parsed.value_or(RunEnd::kCompleted);
  summary.message = string_or(group, "message");
  summary.cycles = long_or(group, "cycles", 0);
  summary.events = long_or(group, "events", 0);
  summary.configurations_built =
      static_cast<std::size_t>(long_or(group, "configurations_built", 0));
  summary.cache_hits = static_cast<std::size_t>(long_or(group, "cache_hits", 0));
  summary.wall_time_s = double_or(group, "wall_time_s", 0.0);
  summary.end_time_s = double_or(group, "end_time_s", 0.0);
  summary.recorded.clear();
  for (const TraceSignal& signal : info.signals) {
    summary.recorded.push_back(SignalInfo{signal.name, signal.quantity, -1});
  }
  summary.state_names =
      h5::read_string_array_attribute(group, "state_names").value_or(std::vector<std::string>{});
  const std::vector<double> state = doubles_or_empty(group, "final_state");
  summary.final_state =
      Eigen::Map<const Eigen::VectorXd>(state.data(), static_cast<Eigen::Index>(state.size()));
  if (has_link(root, "summary/last_cycle")) {
    summary.last_cycle = read_last_cycle(file->openGroup(layout::kLastCycle));
  }
  if (has_link(root, "summary/startup")) {
    const H5::Group startup = file->openGroup(layout::kStartup);
    StartupMetrics& s = summary.startup;
    s.inductors =
        h5::read_string_array_attribute(startup, "inductors").value_or(std::vector<std::string>{});
    s.peak_inductor_current_a = doubles_or_empty(startup, "peak_inductor_current_a");
    s.output_peak = double_or(startup, "output_peak", 0.0);
    s.overshoot = double_or(startup, "overshoot", 0.0);
    s.settling_cycle = long_or(startup, "settling_cycle", -1);
    s.steady_state_cycle = long_or(startup, "steady_state_cycle", -1);
  }
  info.summary = std::move(summary);
}

TraceFile::TraceFile(const std::string& path) : impl_(std::make_unique<Impl>()) {
  h5::silence_hdf5_errors();
  impl_->path = path;
  impl_->open();
}

TraceFile::~TraceFile() = default;
TraceFile::TraceFile(TraceFile&&) noexcept = default;
TraceFile& TraceFile::operator=(TraceFile&&) noexcept = default;

const TraceInfo& TraceFile::info() const { return impl_->info; }

int TraceFile::find_signal(const std::string& name) const {
  const std::vector<TraceSignal>& signals = impl_->info.signals;
  for (std::size_t k = 0; k < signals.size(); ++k) {
    if (signals[k].name == name) return static_cast<int>(k);
  }
  return -1;
}

namespace {

// Clips [first, first + count) to [0, total).
std::pair<std::size_t, std::size_t> clip(long first, long count, long total) {
  const long begin = std::clamp(first, 0L, total);
  const long end = count < 0 ? total : std::clamp(begin + count, begin, total);
  return {static_cast<std::size_t>(begin), static_cast<std::size_t>(end - begin)};
}

// Rows of a dataset, `width` values each (0: a 1-D dataset, one value per row). A per-signal
// dataset of a run with no signals has width 0 in the caller's terms and reads nothing.
template <class T>
std::vector<T> read_column(const H5::H5File& file, const std::string& name, std::size_t first,
                           std::size_t count, std::size_t width, const H5::DataType& type,
                           bool per_signal = false) {
  if (per_signal && width == 0) return {};
  std::vector<T> values(count * std::max<std::size_t>(width, 1));
  h5::read_rows(file.openDataSet(name), first, count, type, values.data());
  return values;
}

}  // namespace

WaveformBlock TraceFile::read_waveforms(long first, long count) const {
  const auto [begin, n] = clip(first, count, impl_->info.waveform_rows);
  WaveformBlock block;
  block.first_row = static_cast<long>(begin);
  block.signal_count = impl_->info.signals.size();
  try {
    const auto f64 = H5::PredType::NATIVE_DOUBLE;
    block.time_s = read_column<double>(*impl_->file, "/waveforms/time_s", begin, n, 0, f64);
    block.values = read_column<double>(*impl_->file, "/waveforms/values", begin, n,
                                       block.signal_count, f64, true);
  } catch (const H5::Exception& e) {
    damaged(impl_->path, "waveform rows " + std::to_string(begin) + " .. cannot be read", e);
  }
  return block;
}

std::vector<CycleMetrics> TraceFile::read_cycles(long first, long count) const {
  const auto [begin, n] = clip(first, count, impl_->info.cycle_rows);
  const std::size_t s = impl_->info.signals.size();
  const std::size_t d = layout::kIntervalColumns;
  std::vector<CycleMetrics> cycles(n);
  try {
    const H5::H5File& f = *impl_->file;
    const auto f64 = H5::PredType::NATIVE_DOUBLE;
    const auto i64 = H5::PredType::NATIVE_INT64;
    const auto index = read_column<std::int64_t>(f, "/cycles/index", begin, n, 0, i64);
    const auto start = read_column<double>(f, "/cycles/start_time_s", begin, n, 0, f64);
    const auto mode = read_column<std::int8_t>(f, "/cycles/mode", begin, n, 0, layout::mode_type());
    const auto intervals = read_column<std::int32_t>(f, "/cycles/interval_count", begin, n, 0,
                                                     H5::PredType::NATIVE_INT32);
    const auto fractions = read_column<double>(f, "/cycles/fractions", begin, n, d, f64);
    const auto patterns =
        read_column<std::uint64_t>(f, "/cycles/patterns", begin, n, d, H5::PredType::NATIVE_UINT64);
    const auto events = read_column<std::int64_t>(f, "/cycles/events", begin, n, 0, i64);
    const auto energy_in = read_column<double>(f, "/cycles/energy_in_j", begin, n, 0, f64);
    const auto stored = read_column<double>(f, "/cycles/stored_energy_change_j", begin, n, 0, f64);
    const auto dissipated = read_column<double>(f, "/cycles/dissipated_j", begin, n, 0, f64);
    const auto change = read_column<double>(f, "/cycles/state_change", begin, n, 0, f64);
    const auto average = read_column<double>(f, "/cycles/average", begin, n, s, f64, true);
    const auto rms = read_column<double>(f, "/cycles/rms", begin, n, s, f64, true);
    const auto min = read_column<double>(f, "/cycles/min", begin, n, s, f64, true);
    const auto max = read_column<double>(f, "/cycles/max", begin, n, s, f64, true);
    for (std::size_t r = 0; r < n; ++r) {
      CycleMetrics& c = cycles[r];
      c.index = static_cast<long>(index[r]);
      c.start_time_s = start[r];
      c.mode = static_cast<ConductionMode>(mode[r]);
      const std::size_t kept = std::min<std::size_t>(std::max(intervals[r], 0), d);
      for (std::size_t k = 0; k < kept; ++k) {
        c.intervals.push_back(ConfigurationInterval{patterns[r * d + k], fractions[r * d + k]});
      }
      c.events = static_cast<long>(events[r]);
      c.energy_in_j = energy_in[r];
      c.stored_energy_change_j = stored[r];
      c.dissipated_j = dissipated[r];
      c.state_change = change[r];
      for (std::size_t k = 0; k < s; ++k) {
        const std::size_t at = r * s + k;
        c.signals.push_back(SignalStats{average[at], rms[at], min[at], max[at]});
      }
    }
  } catch (const H5::Exception& e) {
    damaged(impl_->path, "cycle rows " + std::to_string(begin) + " .. cannot be read", e);
  }
  return cycles;
}

std::vector<EventRecord> TraceFile::read_events(long first, long count) const {
  const auto [begin, n] = clip(first, count, impl_->info.event_rows);
  std::vector<EventRecord> events(n);
  try {
    const H5::H5File& f = *impl_->file;
    const auto i32 = H5::PredType::NATIVE_INT32;
    const auto time =
        read_column<double>(f, "/events/time_s", begin, n, 0, H5::PredType::NATIVE_DOUBLE);
    const auto kind =
        read_column<std::int8_t>(f, "/events/kind", begin, n, 0, layout::event_kind_type());
    const auto element = read_column<std::int32_t>(f, "/events/element", begin, n, 0, i32);
    const auto name = read_column<std::int32_t>(f, "/events/name_index", begin, n, 0, i32);
    const auto pattern = read_column<std::uint64_t>(f, "/events/pattern_after", begin, n, 0,
                                                    H5::PredType::NATIVE_UINT64);
    const std::vector<std::string>& names = impl_->event_names;
    for (std::size_t r = 0; r < n; ++r) {
      EventRecord& e = events[r];
      e.time_s = time[r];
      e.kind = static_cast<EventKind>(kind[r]);
      e.element = element[r];
      const bool known = name[r] >= 0 && static_cast<std::size_t>(name[r]) < names.size();
      e.element_name = known ? names[static_cast<std::size_t>(name[r])] : std::string("?");
      e.pattern_after = pattern[r];
    }
  } catch (const H5::Exception& e) {
    damaged(impl_->path, "event rows " + std::to_string(begin) + " .. cannot be read", e);
  }
  return events;
}

TraceInfo read_trace_info(const std::string& path) { return TraceFile(path).info(); }

}  // namespace pulsewise
