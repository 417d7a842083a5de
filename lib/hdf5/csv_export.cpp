// export_csv(): waveforms.csv, cycles.csv and events.csv from a trace file, read in blocks so that
// memory stays bounded whatever the file size.
#include <charconv>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <system_error>

#include "pulsewise/error.hpp"
#include "pulsewise/trace_file.hpp"
#include "trace_layout.hpp"

namespace pulsewise {

namespace layout = detail::layout;

void ExportOptions::validate() const {
  if (precision < 0 || precision > 17) {
    throw InputError(ErrorKind::kInvalidOption, "precision",
                     "precision " + std::to_string(precision) + " is out of range",
                     "give 1 .. 17 significant digits, or 0 for the shortest exact text");
  }
  if (!(start_s <= end_s)) {
    throw InputError(ErrorKind::kInvalidOption, "start_s",
                     "the export window starts after it ends (or is NaN)", "give start_s <= end_s");
  }
}

namespace {

constexpr long kBlockRows = 1 << 16;

class CsvWriter {
 public:
  CsvWriter(const std::filesystem::path& path, int precision) : path_(path), precision_(precision) {
    out_.open(path, std::ios::binary | std::ios::trunc);
    if (!out_) {
      throw InputError(ErrorKind::kInvalidOption, "", "cannot write the CSV file",
                       "check that the output directory is writable",
                       SourceLocation{path.string()});
    }
  }
  void number(double value) {
    separate();
    char text[64];
    const std::to_chars_result r = precision_ == 0
                                       ? std::to_chars(text, text + sizeof text, value)
                                       : std::to_chars(text, text + sizeof text, value,
                                                       std::chars_format::general, precision_);
    out_.write(text, r.ptr - text);
  }
  void integer(long long value) {
    separate();
    out_ << value;
  }
  void hex(std::uint64_t value) {
    separate();
    char text[24];
    std::snprintf(text, sizeof text, "0x%llx", static_cast<unsigned long long>(value));
    out_ << text;
  }
  // Quotes the field when it holds a separator, a quote or a line break.
  void text(const std::string& value) {
    separate();
    if (value.find_first_of(",\"\n\r") == std::string::npos) {
      out_ << value;
      return;
    }
    out_ << '"';
    for (char c : value) out_ << (c == '"' ? "\"\"" : std::string(1, c));
    out_ << '"';
  }
  void end_row() {
    out_ << '\n';
    first_ = true;
  }
  void finish() {
    out_.flush();
    if (!out_) {
      throw InputError(ErrorKind::kInvalidOption, "", "writing the CSV file failed",
                       "check the free disk space", SourceLocation{path_.string()});
    }
  }

 private:
  void separate() {
    if (!first_) out_ << ',';
    first_ = false;
  }
  std::filesystem::path path_;
  std::ofstream out_;
  int precision_;
  bool first_ = true;
};

std::string labelled(const std::string& name, const std::string& unit) {
  return unit.empty() ? name : name + " [" + unit + "]";
}

std::vector<std::size_t> selected_signals(const TraceFile& trace, const ExportOptions& options) {
  const TraceInfo& info = trace.info();
  std::vector<std::size_t> selected;
  if (options.signals.empty()) {
    for (std::size_t k = 0; k < info.signals.size(); ++k) selected.push_back(k);
    return selected;
  }
  for (const std::string& name : options.signals) {
    const int index = trace.find_signal(name);
    if (index < 0) {
      std::string known;
      for (const TraceSignal& signal : info.signals)
        known += (known.empty() ? "" : ", ") + signal.name;
      throw InputError(ErrorKind::kInvalidOption, name, "no signal of this name in the trace file",
                       "choose among: " + known, SourceLocation{info.path});
    }
    selected.push_back(static_cast<std::size_t>(index));
  }
  return selected;
}

bool inside(double t, const ExportOptions& options) {
  return t >= options.start_s && t <= options.end_s;
}

long export_waveforms(const TraceFile& trace, const std::vector<std::size_t>& selected,
                      const ExportOptions& options, CsvWriter& csv) {
  const TraceInfo& info = trace.info();
  csv.text("time [s]");
  for (std::size_t k : selected) csv.text(labelled(info.signals[k].name, info.signals[k].unit));
  csv.end_row();
  long written = 0;
  for (long first = 0; first < info.waveform_rows; first += kBlockRows) {
    const WaveformBlock block = trace.read_waveforms(first, kBlockRows);
    for (std::size_t r = 0; r < block.rows(); ++r) {
      if (!inside(block.time_s[r], options)) continue;
      csv.number(block.time_s[r]);
      for (std::size_t k : selected) csv.number(block.value(r, k));
      csv.end_row();
      ++written;
    }
  }
  return written;
}

long export_cycles(const TraceFile& trace, const std::vector<std::size_t>& selected,
                   const ExportOptions& options, CsvWriter& csv) {
  const TraceInfo& info = trace.info();
  for (const char* title : {"index", "start_time [s]", "mode", "intervals", "D1", "D2", "D3",
                            "pattern1", "pattern2", "pattern3", "events", "energy_in [J]",
                            "stored_energy_change [J]", "dissipated [J]", "state_change"}) {
    csv.text(title);
  }
  for (std::size_t k : selected) {
    for (const char* stat : {" average", " rms", " min", " max"}) {
      csv.text(labelled(info.signals[k].name + stat, info.signals[k].unit));
    }
  }
  csv.end_row();
  long written = 0;
  for (long first = 0; first < info.cycle_rows; first += kBlockRows) {
    for (const CycleMetrics& c : trace.read_cycles(first, kBlockRows)) {
      if (!inside(c.start_time_s, options)) continue;
      csv.integer(c.index);
      csv.number(c.start_time_s);
      csv.text(layout::mode_name(c.mode));
      csv.integer(static_cast<long long>(c.intervals.size()));
      for (std::size_t k = 0; k < 3; ++k)
        csv.number(k < c.intervals.size() ? c.intervals[k].fraction : 0.0);
      for (std::size_t k = 0; k < 3; ++k)
        csv.hex(k < c.intervals.size() ? c.intervals[k].pattern : 0);
      csv.integer(c.events);
      csv.number(c.energy_in_j);
      csv.number(c.stored_energy_change_j);
      csv.number(c.dissipated_j);
      csv.number(c.state_change);
      for (std::size_t k : selected) {
        csv.number(c.signals[k].average);
        csv.number(c.signals[k].rms);
        csv.number(c.signals[k].min);
        csv.number(c.signals[k].max);
      }
      csv.end_row();
      ++written;
    }
  }
  return written;
}

long export_events(const TraceFile& trace, const ExportOptions& options, CsvWriter& csv) {
  for (const char* title : {"time [s]", "kind", "element", "element_index", "pattern_after"}) {
    csv.text(title);
  }
  csv.end_row();
  long written = 0;
  for (long first = 0; first < trace.info().event_rows; first += kBlockRows) {
    for (const EventRecord& e : trace.read_events(first, kBlockRows)) {
      if (!inside(e.time_s, options)) continue;
      csv.number(e.time_s);
      csv.text(layout::event_kind_name(e.kind));
      csv.text(e.element_name);
      csv.integer(e.element);
      csv.hex(e.pattern_after);
      csv.end_row();
      ++written;
    }
  }
  return written;
}

std::filesystem::path prepare_directory(const std::string& out_dir) {
  const std::filesystem::path dir(out_dir.empty() ? "." : out_dir);
  std::error_code error;
  std::filesystem::create_directories(dir, error);
  if (!std::filesystem::is_directory(dir, error)) {
    throw InputError(ErrorKind::kInvalidOption, "",
                     "cannot create the export directory" +
                         (error ? " (" + error.message() + ")" : std::string()),
                     "give a directory that can be created and written", SourceLocation{out_dir});
  }
  return dir;
}

}  // namespace

ExportResult export_csv(const std::string& trace_path, const std::string& out_dir,
                        const ExportOptions& options) {
  options.validate();
  const TraceFile trace(trace_path);
  const std::vector<std::size_t> selected = selected_signals(trace, options);
  const std::filesystem::path dir = prepare_directory(out_dir);
  ExportResult result;
  const auto write = [&](const char* name, auto&& body) {
    CsvWriter csv(dir / name, options.precision);
    const long rows = body(csv);
    csv.finish();
    result.files.push_back((dir / name).string());
    return rows;
  };
  if (options.waveforms) {
    result.waveform_rows = write("waveforms.csv", [&](CsvWriter& csv) {
      return export_waveforms(trace, selected, options, csv);
    });
  }
  if (options.cycles) {
    result.cycle_rows = write(
        "cycles.csv", [&](CsvWriter& csv) { return export_cycles(trace, selected, options, csv); });
  }
  if (options.events) {
    result.event_rows =
        write("events.csv", [&](CsvWriter& csv) { return export_events(trace, options, csv); });
  }
  return result;
}

}  // namespace pulsewise
