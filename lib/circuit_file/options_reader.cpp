// Readers for [run] (SimulationOptions) and [record] (RecordingOptions). The ranges match those
// of SimulationOptions::validate() and RecordingOptions::validate(), checked here first so that
// the message points at the key in the file.
#include <algorithm>
#include <limits>

#include "loader.hpp"
#include "suggest.hpp"

namespace pulsewise::detail {

namespace {

constexpr long kLongMax = std::numeric_limits<long>::max();
constexpr long kIntMax = std::numeric_limits<int>::max();

const toml::table kEmptyTable;

void read_run_lengths(const TableReader& run, SimulationOptions& o) {
  o.periods = run.integer_or("periods", 1, kLongMax, o.periods);
  o.switching_period_s = run.value_or("switching_period", Unit::kSecond, Range::non_negative(),
                                      "\"5 us\"", o.switching_period_s);
  o.substeps_per_period =
      static_cast<int>(run.integer_or("substeps_per_period", 1, 100'000, o.substeps_per_period));
  o.max_step_norm = run.value_or("max_step_norm", Unit::kNone, Range{0.0, 2.0, true, false}, "0.5",
                                 o.max_step_norm);
}

void read_run_tolerances(const TableReader& run, SimulationOptions& o) {
  o.event_time_tolerance =
      run.value_or("event_time_tolerance", Unit::kNone, Range{0.0, 1e-3, true, true}, "1e-14",
                   o.event_time_tolerance);
  o.device_condition_tolerance =
      run.value_or("device_condition_tolerance", Unit::kNone, Range{0.0, 1e-2, true, true}, "1e-9",
                   o.device_condition_tolerance);
  o.max_events_per_period = static_cast<int>(
      run.integer_or("max_events_per_period", 2, kIntMax, o.max_events_per_period));
  o.max_consistency_iterations = static_cast<int>(
      run.integer_or("max_consistency_iterations", 1, kIntMax, o.max_consistency_iterations));
  o.boundary_tolerance = run.value_or("boundary_tolerance", Unit::kNone,
                                      Range{0.0, 1.0, false, true}, "1e-3", o.boundary_tolerance);
}

void read_run_steady_state(const TableReader& run, const Circuit& circuit, SimulationOptions& o) {
  o.stop_at_steady_state = run.boolean_or("stop_at_steady_state", o.stop_at_steady_state);
  o.steady_state_tolerance = run.value_or("steady_state_tolerance", Unit::kNone,
                                          Range::open_fraction(), "1e-9", o.steady_state_tolerance);
  o.steady_state_periods =
      static_cast<int>(run.integer_or("steady_state_periods", 1, kIntMax, o.steady_state_periods));
  o.output_signal = run.string_or("output_signal", o.output_signal);
  if (const toml::node* node = run.find("output_signal")) {
    check_signal(circuit, o.output_signal, run, *node, "output_signal");
  }
  o.settling_band =
      run.value_or("settling_band", Unit::kNone, Range::open_fraction(), "0.02", o.settling_band);
  o.cache = run.boolean_or("cache", o.cache);
  o.replay_repeating_periods =
      run.boolean_or("replay_repeating_periods", o.replay_repeating_periods);
  o.repeat_recurring_periods =
      run.boolean_or("repeat_recurring_periods", o.repeat_recurring_periods);
  o.reuse_piece_operators = run.boolean_or("reuse_piece_operators", o.reuse_piece_operators);
  o.energy_accounting = run.boolean_or("energy_accounting", o.energy_accounting);
}

// The ODE path (circuits with saturating inductors or constant-power loads).
void read_run_ode(const TableReader& run, SimulationOptions& o) {
  o.ode_relative_tolerance =
      run.value_or("ode_relative_tolerance", Unit::kNone, Range{0.0, 1e-2, true, true}, "1e-10",
                   o.ode_relative_tolerance);
  o.ode_absolute_tolerance =
      run.value_or("ode_absolute_tolerance", Unit::kNone, Range{0.0, 1.0, true, true}, "1e-12",
                   o.ode_absolute_tolerance);
  const std::string stepper = run.string_or("ode_stepper", "auto");
  if (stepper == "auto") {
    o.ode_stepper = OdeStepper::kAuto;
  } else if (stepper == "explicit") {
    o.ode_stepper = OdeStepper::kExplicit;
  } else if (stepper == "stiff") {
    o.ode_stepper = OdeStepper::kStiff;
  } else {
    run.fail(ErrorKind::kInvalidOption, run.find("ode_stepper"),
             "ode_stepper is \"" + stepper + "\"", "write \"auto\", \"explicit\" or \"stiff\"");
  }
}

std::vector<std::string> read_signals(const TableReader& record, const Circuit& circuit) {
  std::vector<std::string> signals;
  const toml::array* list = record.array_or_null("signals", "[\"L1.i\", \"out.v\"]");
  if (!list) return signals;
  for (const toml::node& item : *list) {
    const auto* s = item.as_string();
    if (!s) {
      record.fail(ErrorKind::kInvalidValue, &item,
                  std::string("signal names must be strings, not a ") + toml_type_name(item),
                  "write e.g. signals = [\"L1.i\", \"out.v\"]");
    }
    check_signal(circuit, s->get(), record, item, "signals");
    signals.push_back(s->get());
  }
  return signals;
}

std::vector<RecordingWindow> read_time_windows(const TableReader& record) {
  std::vector<RecordingWindow> windows;
  const std::string example = "[[\"0 s\", \"0.5 ms\"], [\"9.5 ms\", \"10 ms\"]]";
  const toml::array* list = record.array_or_null("windows", example);
  if (!list) return windows;
  for (const toml::node& item : *list) {
    const auto* pair = item.as_array();
    if (!pair || pair->size() != 2) {
      record.fail(ErrorKind::kInvalidValue, &item, "each window must be a [start, end] pair",
                  "write e.g. windows = " + example);
    }
    RecordingWindow w;
    w.start_s = record.value_at(*pair->get(0), "window start", Unit::kSecond, Range::non_negative(),
                                "\"0 s\"");
    w.end_s = record.value_at(*pair->get(1), "window end", Unit::kSecond, Range::positive(),
                              "\"0.5 ms\"");
    if (!(w.end_s > w.start_s)) {
      record.fail(ErrorKind::kInvalidValue, &item,
                  "window end " + format_si_value(w.end_s, Unit::kSecond) +
                      " is not after its start " + format_si_value(w.start_s, Unit::kSecond),
                  "write [start, end] with end later than start");
    }
    windows.push_back(w);
  }
  return windows;
}

// first_periods / last_periods: windows counted in switching periods from the run's ends.
void add_period_windows(const TableReader& record, double period_s, long periods,
                        std::vector<RecordingWindow>& windows) {
  for (const char* key : {"first_periods", "last_periods"}) {
    const toml::node* node = record.find(key);
    if (!node) continue;
    const long n = record.integer_at(*node, key, 1, periods);
    if (!(period_s > 0.0)) {
      record.fail(ErrorKind::kInvalidOption, node,
                  std::string(key) + " needs a switching period, and none is set",
                  "add a [[pwm]] or [[complementary_pwm]], or set [run] switching_period");
    }
    const bool first = std::string_view(key) == "first_periods";
    const double start = first ? 0.0 : static_cast<double>(periods - n) * period_s;
    const double end =
        first ? static_cast<double>(n) * period_s : static_cast<double>(periods) * period_s;
    windows.push_back({start, end});
  }
}

// Overlapping or touching windows become one, so a recorder never writes a sample twice.
std::vector<RecordingWindow> merge_windows(std::vector<RecordingWindow> windows) {
  std::sort(windows.begin(), windows.end(),
            [](const auto& a, const auto& b) { return a.start_s < b.start_s; });
  std::vector<RecordingWindow> merged;
  for (const auto& w : windows) {
    if (!merged.empty() && w.start_s <= merged.back().end_s) {
      merged.back().end_s = std::max(merged.back().end_s, w.end_s);
    } else {
      merged.push_back(w);
    }
  }
  return merged;
}

void check_windows_inside_run(const TableReader& record, const std::vector<RecordingWindow>& ws,
                              double period_s, long periods) {
  if (!(period_s > 0.0) || ws.empty()) return;
  const double run_end = static_cast<double>(periods) * period_s;
  if (ws.back().start_s < run_end) return;
  record.fail(ErrorKind::kInvalidOption, record.find("windows"),
              "a recording window starts at " + format_si_value(ws.back().start_s, Unit::kSecond) +
                  ", after the run ends at " + format_si_value(run_end, Unit::kSecond) + " (" +
                  std::to_string(periods) + " periods)",
              "move the window inside the run, or raise [run] periods");
}

}  // namespace

std::set<std::string> node_names(const Circuit& circuit) {
  std::set<std::string> nodes;
  for (const Element& e : circuit.elements()) {
    nodes.insert(e.node_a);
    nodes.insert(e.node_b);
  }
  return nodes;
}

void check_signal(const Circuit& circuit, const std::string& signal, const TableReader& reader,
                  const toml::node& at, std::string_view key) {
  const auto dot = signal.rfind('.');
  const std::string base = dot == std::string::npos ? signal : signal.substr(0, dot);
  const std::string quantity = dot == std::string::npos ? "" : signal.substr(dot + 1);
  const auto fail = [&](std::string problem, std::string fix) {
    reader.fail(ErrorKind::kInvalidOption, &at,
                std::string(key) + ": signal '" + signal + "' " + problem, std::move(fix));
  };
  if (quantity != "v" && quantity != "i") {
    fail("does not end in .v (voltage) or .i (current)", "write e.g. \"out.v\" or \"L1.i\"");
  }
  if (Circuit::is_ground(base)) {
    fail("is the ground node, which is 0 V by definition", "record another node or element");
  }
  const bool is_element = circuit.find_element(base) >= 0;
  const std::set<std::string> nodes = node_names(circuit);
  if (quantity == "i" && !is_element && nodes.count(base)) {
    fail("asks for the current of a node", "ask for an element's current, e.g. \"L1.i\"");
  }
  if (is_element || nodes.count(base)) return;
  std::vector<std::string> candidates;
  for (const auto& n : nodes) {
    if (!Circuit::is_ground(n)) candidates.push_back(n);
  }
  for (const Element& e : circuit.elements()) candidates.push_back(e.name);
  const std::string match = closest_match(base, candidates);
  fail("names '" + base + "', which is neither a node nor an element of the circuit",
       match.empty() ? "name a node or an element of this circuit"
                     : "did you mean '" + match + "." + quantity + "'?");
}

SimulationOptions read_run(const toml::table* table, const std::string& file,
                           const Circuit& circuit) {
  SimulationOptions o;
  TableReader run(table ? *table : kEmptyTable, file, "[run]",
                  {"periods",
                   "switching_period",
                   "substeps_per_period",
                   "max_step_norm",
                   "event_time_tolerance",
                   "device_condition_tolerance",
                   "max_events_per_period",
                   "max_consistency_iterations",
                   "boundary_tolerance",
                   "stop_at_steady_state",
                   "steady_state_tolerance",
                   "steady_state_periods",
                   "output_signal",
                   "settling_band",
                   "cache",
                   "replay_repeating_periods",
                   "repeat_recurring_periods",
                   "reuse_piece_operators",
                   "energy_accounting",
                   "ode_stepper",
                   "ode_relative_tolerance",
                   "ode_absolute_tolerance"});
  run.set_value_error_kind(ErrorKind::kInvalidOption);
  read_run_lengths(run, o);
  read_run_tolerances(run, o);
  read_run_steady_state(run, circuit, o);
  read_run_ode(run, o);
  return o;
}

RecordingOptions read_record(const toml::table* table, const std::string& file,
                             const Circuit& circuit, double switching_period_s,
                             SimulationOptions& options) {
  RecordingOptions r;
  TableReader record(table ? *table : kEmptyTable, file, "[record]",
                     {"signals", "windows", "first_periods", "last_periods", "samples_per_period",
                      "event_log", "cycle_table", "flush_every_periods", "file"});
  record.set_value_error_kind(ErrorKind::kInvalidOption);
  options.recorded_signals = read_signals(record, circuit);
  std::vector<RecordingWindow> windows = read_time_windows(record);
  add_period_windows(record, switching_period_s, options.periods, windows);
  r.windows = merge_windows(std::move(windows));
  check_windows_inside_run(record, r.windows, switching_period_s, options.periods);
  r.samples_per_period =
      static_cast<int>(record.integer_or("samples_per_period", 0, 100'000, r.samples_per_period));
  r.record_events = record.boolean_or("event_log", r.record_events);
  r.record_cycles = record.boolean_or("cycle_table", r.record_cycles);
  r.flush_every_periods =
      record.integer_or("flush_every_periods", 1, kLongMax, r.flush_every_periods);
  r.output_path = record.string_or("file", r.output_path);
  return r;
}

}  // namespace pulsewise::detail
