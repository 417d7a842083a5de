// describe(): the text of `pulsewise info`-style output for a trace file.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "pulsewise/trace_file.hpp"
#include "trace_layout.hpp"

namespace pulsewise {

namespace {

// 4 significant digits with an SI prefix: 1e-5, "s" -> "10 us".
std::string si(double value, const char* unit) {
  if (!std::isfinite(value)) return std::isnan(value) ? "n/a" : (value > 0 ? "inf" : "-inf");
  static const char* const kPrefixes[] = {"f", "p", "n", "u", "m", "", "k", "M", "G"};
  int group = 0;
  if (value != 0.0) group = static_cast<int>(std::floor(std::log10(std::abs(value)) / 3.0));
  char text[64];
  if (group < -5 || group > 3) {
    // Beyond the prefixes (rounding residue such as 1e-17 A): plain exponent form.
    std::snprintf(text, sizeof text, "%.4g %s", value, unit);
    return text;
  }
  std::snprintf(text, sizeof text, "%.4g %s%s", value / std::pow(10.0, 3 * group),
                kPrefixes[group + 5], unit);
  return text;
}

void describe_signals(std::ostringstream& out, const TraceInfo& info) {
  out << "signals (" << info.signals.size() << "):";
  for (const TraceSignal& signal : info.signals)
    out << ' ' << signal.name << " [" << signal.unit << ']';
  out << '\n';
}

void describe_rows(std::ostringstream& out, const TraceInfo& info) {
  out << "waveforms: " << info.waveform_rows << " rows";
  if (info.waveform_rows > 0) {
    out << ", " << si(info.waveform_first_s, "s") << " .. " << si(info.waveform_last_s, "s");
  }
  if (info.windows.empty()) {
    out << " (whole run)";
  } else {
    out << " in " << info.windows.size() << (info.windows.size() == 1 ? " window" : " windows");
  }
  out << ", " << info.samples_per_period << " samples per period\n";
  out << "cycles: " << info.cycle_rows << " rows\n";
  out << "events: " << info.event_rows << " rows\n";
}

void describe_summary(std::ostringstream& out, const TraceInfo& info) {
  if (!info.summary) {
    out << "run: did not finish; the file holds " << info.flushed_cycles
        << " flushed periods up to t = " << si(info.flushed_until_s, "s") << '\n';
    return;
  }
  const RunSummary& s = *info.summary;
  out << "run: " << detail::layout::run_end_name(s.end) << " after " << s.cycles << " cycles, "
      << s.events << " events, t = " << si(s.end_time_s, "s");
  if (!s.message.empty()) out << " (" << s.message << ')';
  out << '\n';
  const CycleMetrics& last = s.last_cycle;
  const std::size_t n = std::min(last.signals.size(), info.signals.size());
  if (n == 0) return;
  out << "last cycle " << last.index << " (" << detail::layout::mode_name(last.mode) << "):\n";
  for (std::size_t k = 0; k < n; ++k) {
    const char* unit = info.signals[k].unit.c_str();
    const SignalStats& stats = last.signals[k];
    out << "  " << info.signals[k].name << ": average " << si(stats.average, unit) << ", rms "
        << si(stats.rms, unit) << ", min " << si(stats.min, unit) << ", max " << si(stats.max, unit)
        << '\n';
  }
}

}  // namespace

std::string describe(const TraceInfo& info) {
  std::ostringstream out;
  out << "trace file: " << info.path << " (" << kTraceFormatName << " version "
      << info.format_version << ", pulsewise " << info.program_version << ", " << info.created_utc
      << ")\n";
  out << "circuit: " << (info.circuit_name.empty() ? "(unnamed)" : info.circuit_name);
  if (!info.circuit_file.empty()) out << " from " << info.circuit_file;
  out << '\n';
  out << "switching period: " << si(info.switching_period_s, "s") << ", " << info.periods_requested
      << " periods asked for\n";
  describe_signals(out, info);
  describe_rows(out, info);
  describe_summary(out, info);
  for (const std::string& warning : info.warnings) out << "warning: " << warning << '\n';
  return out.str();
}

}  // namespace pulsewise
