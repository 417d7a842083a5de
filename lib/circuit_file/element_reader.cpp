// Readers for the element and modulator tables of a circuit file.
#include <cmath>
#include <numbers>
#include <utility>

#include "loader.hpp"

namespace pulsewise::detail {

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

std::string section_of(const std::string& key) { return "[[" + key + "]]"; }

// What the fix text suggests for a missing name, per section.
std::string name_example(const std::string& section) {
  static const std::vector<std::pair<std::string, std::string>> examples{
      {"[[resistor]]", "R1"},
      {"[[inductor]]", "L1"},
      {"[[capacitor]]", "C1"},
      {"[[voltage_source]]", "Vin"},
      {"[[current_source]]", "Iload"},
      {"[[switch]]", "S1"},
      {"[[diode]]", "D1"},
      {"[[pwm]]", "pwm1"},
      {"[[complementary_pwm]]", "hb"},
      {"[[schedule]]", "load_step"}};
  for (const auto& [key, example] : examples) {
    if (key == section) return "\"" + example + "\"";
  }
  return "\"X1\"";
}

std::string read_name(const TableReader& reader, std::string_view what) {
  std::string name = reader.string("name", name_example(reader.section()));
  check_name(reader, *reader.find("name"), name, what);
  return name;
}

std::string node_name(const TableReader& reader, const toml::node& node) {
  if (const auto* i = node.as_integer(); i && i->get() >= 0) return std::to_string(i->get());
  const auto* s = node.as_string();
  if (!s) {
    reader.fail(ErrorKind::kInvalidValue, &node,
                std::string("a node name must be a string, not a ") + toml_type_name(node),
                "write node names in quotes, e.g. nodes = [\"out\", \"0\"]");
  }
  check_name(reader, node, s->get(), "node");
  return s->get();
}

// nodes = [a, b]; `terminals` says what a and b are for this kind, for the messages.
std::pair<std::string, std::string> read_nodes(const TableReader& reader,
                                               std::string_view terminals) {
  const std::string example = "[\"in\", \"0\"]";
  const toml::array& nodes = reader.array("nodes", example);
  if (nodes.size() != 2) {
    reader.fail(ErrorKind::kInvalidValue, reader.find("nodes"),
                "nodes must list exactly two node names (" + std::string(terminals) + "), not " +
                    std::to_string(nodes.size()),
                "write e.g. nodes = " + example);
  }
  std::string a = node_name(reader, *nodes.get(0));
  std::string b = node_name(reader, *nodes.get(1));
  if (a == b || (Circuit::is_ground(a) && Circuit::is_ground(b))) {
    reader.fail(ErrorKind::kInvalidValue, reader.find("nodes"),
                "both terminals are on node '" + a + "', so the element does nothing",
                "connect the two terminals to different nodes");
  }
  return {std::move(a), std::move(b)};
}

// "open" (an exact open circuit) or a resistance > 0.
double off_resistance(const TableReader& reader) {
  const toml::node* node = reader.find("off_resistance");
  if (!node) return kOpen;
  if (const auto* s = node->as_string(); s && s->get() == "open") return kOpen;
  return reader.value_at(*node, "off_resistance", Unit::kOhm, Range::positive(),
                         "\"open\" or \"1 MOhm\"");
}

void read_resistor(const TableReader& reader, Circuit& circuit) {
  auto [a, b] = read_nodes(reader, "either terminal first");
  const double r = reader.value("resistance", Unit::kOhm, Range::positive(), "\"60 Ohm\"");
  circuit.add_resistor(reader.element(), a, b, r, reader.location());
}

// saturation_current and saturated_inductance come together: both or neither.
void read_saturation(const TableReader& reader, double inductance_h, InductorOptions& options) {
  const toml::node* current = reader.find("saturation_current");
  const toml::node* inductance = reader.find("saturated_inductance");
  if (!current && !inductance) return;
  if (!current || !inductance) {
    const std::string missing = current ? "saturated_inductance" : "saturation_current";
    reader.fail(ErrorKind::kMissingKey, current ? current : inductance,
                "a saturating inductor needs both saturation_current and saturated_inductance",
                "add " + missing + (current ? " = \"2.2 uH\"" : " = \"3 A\""));
  }
  options.saturation_current_a =
      reader.value("saturation_current", Unit::kAmpere, Range::positive(), "\"3 A\"");
  const Range below_l0{0.0, inductance_h, true, true};
  options.saturated_inductance_h = reader.value(
      "saturated_inductance", Unit::kHenry, below_l0,
      "\"" + format_si_value(inductance_h / 4.0, Unit::kHenry) + "\" (below the inductance)");
}

void read_inductor(const TableReader& reader, Circuit& circuit) {
  auto [a, b] = read_nodes(reader, "current flows from the first to the second");
  const double l = reader.value("inductance", Unit::kHenry, Range::positive(), "\"10 uH\"");
  InductorOptions options;
  options.winding_resistance_ohm =
      reader.value_or("winding_resistance", Unit::kOhm, Range::non_negative(), "\"20 mOhm\"", 0.0);
  options.initial_current_a =
      reader.value_or("initial_current", Unit::kAmpere, Range::any(), "\"0 A\"", 0.0);
  read_saturation(reader, l, options);
  circuit.add_inductor(reader.element(), a, b, l, options, reader.location());
}

void read_capacitor(const TableReader& reader, Circuit& circuit) {
  auto [a, b] = read_nodes(reader, "positive terminal first");
  const double c = reader.value("capacitance", Unit::kFarad, Range::positive(), "\"47 uF\"");
  CapacitorOptions options;
  options.series_resistance_ohm =
      reader.value_or("series_resistance", Unit::kOhm, Range::non_negative(), "\"5 mOhm\"", 0.0);
  options.initial_voltage_v =
      reader.value_or("initial_voltage", Unit::kVolt, Range::any(), "\"0 V\"", 0.0);
  circuit.add_capacitor(reader.element(), a, b, c, options, reader.location());
}

Waveform read_step(const TableReader& w, Unit unit, const std::string& example) {
  const double time = w.value("time", Unit::kSecond, Range::non_negative(), "\"1 ms\"");
  const double before = w.value("before", unit, Range::any(), example);
  const double after = w.value("after", unit, Range::any(), example);
  return Waveform::step(time, before, after);
}

Waveform read_table(const TableReader& w, Unit unit, const std::string& example) {
  const std::string points_example = "[[\"0 s\", " + example + "], [\"1 ms\", " + example + "]]";
  const toml::array& points = w.array("points", points_example);
  if (points.size() < 2) {
    w.fail(ErrorKind::kInvalidValue, w.find("points"),
           "a table waveform needs at least two points, it has " + std::to_string(points.size()),
           "add points, or use a plain value for a constant");
  }
  std::vector<std::pair<double, double>> out;
  for (const toml::node& point : points) {
    const auto* pair = point.as_array();
    if (!pair || pair->size() != 2) {
      w.fail(ErrorKind::kInvalidValue, &point, "each point must be a [time, value] pair",
             "write e.g. points = " + points_example);
    }
    const double t =
        w.value_at(*pair->get(0), "point time", Unit::kSecond, Range::non_negative(), "\"1 ms\"");
    const double v = w.value_at(*pair->get(1), "point value", unit, Range::any(), example);
    if (!out.empty() && !(t > out.back().first)) {
      w.fail(ErrorKind::kInvalidValue, &point,
             "point times must increase strictly; " + format_si_value(t, Unit::kSecond) +
                 " does not come after " + format_si_value(out.back().first, Unit::kSecond),
             "list the points in time order, each at a later time");
    }
    out.emplace_back(t, v);
  }
  return Waveform::piecewise_linear(std::move(out));
}

// offset + amplitude * sin(2 pi f t + 2 pi phase), optionally rectified (|sin|). The phase is a
// fraction of the waveform's period, as for the modulators.
Waveform read_sine(const TableReader& w, Unit unit, const std::string& example, bool rectified) {
  const double offset = w.value_or("offset", unit, Range::any(), example, 0.0);
  const double amplitude = w.value("amplitude", unit, Range::non_negative(), example);
  const double f = w.value("frequency", Unit::kHertz, Range::positive(), "\"50 Hz\"");
  const double phase = w.value_or("phase", Unit::kNone, Range::phase(), "0.25", 0.0);
  const double phase_rad = 2.0 * std::numbers::pi * phase;
  return rectified ? Waveform::rectified_sine(offset, amplitude, f, phase_rad)
                   : Waveform::sine(offset, amplitude, f, phase_rad);
}

// key = value, or key = {kind = "constant" | "step" | "table" | "sine" | "rectified_sine", ...}.
Waveform read_waveform(const TableReader& reader, std::string_view key, Unit unit) {
  const std::string example = std::string("\"") + (unit == Unit::kVolt ? "12 V" : "1 A") + "\"";
  const toml::node* node = reader.find(key);
  if (!node || !node->is_table()) {
    return Waveform::constant(reader.value(key, unit, Range::any(), example));
  }
  const TableReader w(*node->as_table(), reader.file(), std::string(key) + " waveform",
                      {"kind", "value", "time", "before", "after", "points", "offset", "amplitude",
                       "frequency", "phase"},
                      reader.element());
  const std::string kind = w.string("kind", "\"step\"");
  const auto only = [&w, &kind](std::vector<std::string> keys) {
    TableReader(w.table(), w.file(), "a '" + kind + "' waveform", std::move(keys), w.element());
  };
  if (kind == "constant") {
    only({"kind", "value"});
    return Waveform::constant(w.value("value", unit, Range::any(), example));
  }
  if (kind == "step") {
    only({"kind", "time", "before", "after"});
    return read_step(w, unit, example);
  }
  if (kind == "table") {
    only({"kind", "points"});
    return read_table(w, unit, example);
  }
  if (kind == "sine" || kind == "rectified_sine") {
    only({"kind", "offset", "amplitude", "frequency", "phase"});
    return read_sine(w, unit, example, kind == "rectified_sine");
  }
  w.fail(ErrorKind::kInvalidValue, w.find("kind"), "unknown waveform kind \"" + kind + "\"",
         "write kind = \"constant\", \"step\", \"table\", \"sine\" or \"rectified_sine\"");
}

void read_voltage_source(const TableReader& reader, Circuit& circuit) {
  auto [plus, minus] = read_nodes(reader, "plus, then minus");
  circuit.add_voltage_source(reader.element(), plus, minus,
                             read_waveform(reader, "voltage", Unit::kVolt), reader.location());
}

void read_current_source(const TableReader& reader, Circuit& circuit) {
  auto [plus, minus] = read_nodes(reader, "current leaves the first into the circuit");
  circuit.add_current_source(reader.element(), plus, minus,
                             read_waveform(reader, "current", Unit::kAmpere), reader.location());
}

void read_switch(const TableReader& reader, Circuit& circuit) {
  auto [a, b] = read_nodes(reader, "current flows from the first to the second when on");
  std::string gate = reader.string("gate", "\"pwm1\"");
  SwitchOptions options;
  options.on_resistance_ohm =
      reader.value_or("on_resistance", Unit::kOhm, Range::non_negative(), "\"10 mOhm\"", 0.0);
  options.off_resistance_ohm = off_resistance(reader);
  circuit.add_switch(reader.element(), a, b, std::move(gate), options, reader.location());
}

void read_diode(const TableReader& reader, Circuit& circuit) {
  auto [anode, cathode] = read_nodes(reader, "anode, then cathode");
  DiodeOptions options;
  options.on_resistance_ohm =
      reader.value_or("on_resistance", Unit::kOhm, Range::non_negative(), "\"20 mOhm\"", 0.0);
  options.forward_voltage_v =
      reader.value_or("forward_voltage", Unit::kVolt, Range::non_negative(), "\"0.4 V\"", 0.0);
  options.off_resistance_ohm = off_resistance(reader);
  circuit.add_diode(reader.element(), anode, cathode, options, reader.location());
}

void read_constant_power_load(const TableReader& reader, Circuit& circuit) {
  auto [a, b] = read_nodes(reader, "the load current flows from the first to the second");
  const double p = reader.value("power", Unit::kWatt, Range::positive(), "\"2 W\"");
  ConstantPowerOptions options;
  options.cut_in_voltage_v = reader.value_or("cut_in_voltage", Unit::kVolt, Range::positive(),
                                             "\"1 V\"", options.cut_in_voltage_v);
  circuit.add_constant_power_load(reader.element(), a, b, p, options, reader.location());
}

struct ElementSchema {
  std::string section;
  std::vector<std::string> keys;
  void (*read)(const TableReader&, Circuit&);
};

const std::vector<ElementSchema>& element_schemas() {
  static const std::vector<ElementSchema> schemas{
      {"resistor", {"name", "nodes", "resistance"}, read_resistor},
      {"inductor",
       {"name", "nodes", "inductance", "winding_resistance", "initial_current",
        "saturation_current", "saturated_inductance"},
       read_inductor},
      {"capacitor",
       {"name", "nodes", "capacitance", "series_resistance", "initial_voltage"},
       read_capacitor},
      {"voltage_source", {"name", "nodes", "voltage"}, read_voltage_source},
      {"current_source", {"name", "nodes", "current"}, read_current_source},
      {"switch", {"name", "nodes", "gate", "on_resistance", "off_resistance"}, read_switch},
      {"diode",
       {"name", "nodes", "on_resistance", "forward_voltage", "off_resistance"},
       read_diode},
      {"constant_power_load",
       {"name", "nodes", "power", "cut_in_voltage"},
       read_constant_power_load},
  };
  return schemas;
}

SoftStart read_soft_start(const TableReader& reader) {
  SoftStart soft;
  const toml::node* node = reader.find("soft_start");
  if (!node) return soft;
  const auto* table = node->as_table();
  if (!table) {
    reader.fail(ErrorKind::kInvalidValue, node,
                std::string("soft_start must be a table, not a ") + toml_type_name(*node),
                "write e.g. soft_start = { initial_duty = 0.05, periods = 200 }");
  }
  const TableReader s(*table, reader.file(), "soft_start", {"initial_duty", "periods"},
                      reader.element());
  soft.initial_duty = s.value("initial_duty", Unit::kNone, Range::fraction(), "0.05");
  soft.periods = s.integer_or("periods", 0, std::numeric_limits<long>::max(), 0);
  if (!s.find("periods")) {
    s.fail(ErrorKind::kMissingKey, nullptr, "soft_start needs the length of the ramp",
           "add periods = 200 (switching periods) to soft_start");
  }
  return soft;
}

template <typename Modulator>
void read_pwm_common(const TableReader& reader, Modulator& m) {
  m.name = reader.element();
  m.frequency_hz = reader.value("frequency", Unit::kHertz, Range::positive(), "\"200 kHz\"");
  m.duty_cycle = reader.value("duty", Unit::kNone, Range::fraction(), "0.3");
  m.phase = reader.value_or("phase", Unit::kNone, Range::phase(), "0.25", 0.0);
  m.soft_start = read_soft_start(reader);
  m.where = reader.location();
}

void check_dead_time(const TableReader& reader, const ComplementaryPwm& m) {
  const double period = 1.0 / m.frequency_hz;
  const double largest_duty = std::max(m.duty_cycle, m.soft_start.initial_duty);
  // Exactly no low-side on-time (duty 1 without dead time) is a legitimate limit case.
  if (m.dead_time_s == 0.0 || largest_duty * period + 2.0 * m.dead_time_s <= period) return;
  reader.fail(ErrorKind::kInvalidValue, reader.find("dead_time"),
              "dead_time = " + format_si_value(m.dead_time_s, Unit::kSecond) +
                  " leaves no on-time for the low gate: duty " + std::to_string(largest_duty) +
                  " of a " + format_si_value(period, Unit::kSecond) +
                  " period plus two dead times is longer than the period",
              "shorten dead_time or lower duty so that duty * period + 2 * dead_time <= period");
}

bool read_gate_state(const TableReader& reader, const toml::node& node, std::string_view what) {
  if (const auto* b = node.as_boolean()) return b->get();
  if (const auto* s = node.as_string()) {
    if (s->get() == "on") return true;
    if (s->get() == "off") return false;
  }
  reader.fail(ErrorKind::kInvalidValue, &node, std::string(what) + " must be \"on\" or \"off\"",
              "write \"on\" or \"off\" (or true / false)");
}

}  // namespace

const std::vector<std::string>& element_section_keys() {
  static const std::vector<std::string> keys = [] {
    std::vector<std::string> out;
    for (const auto& schema : element_schemas()) out.push_back(schema.section);
    return out;
  }();
  return keys;
}

std::string peek_name(const toml::table& table) {
  const toml::node* node = table.get("name");
  const auto* s = node ? node->as_string() : nullptr;
  return s ? s->get() : std::string();
}

void check_name(const TableReader& reader, const toml::node& node, const std::string& name,
                std::string_view what) {
  std::string bad;
  if (name.empty()) bad = "is empty";
  for (char c : name) {
    if (c == '.') bad = "contains '.', which separates names from quantities in signal names";
    if (c == ' ' || c == '\t' || c == '\n' || c == '\r') bad = "contains white space";
    if (static_cast<unsigned char>(c) < 0x20) bad = "contains a control character";
  }
  if (bad.empty()) return;
  reader.fail(ErrorKind::kInvalidValue, &node, std::string(what) + " name \"" + name + "\" " + bad,
              "use letters, digits, '_' or '-', e.g. \"sw_node\"");
}

void read_element(const std::string& section, const toml::table& table, const std::string& file,
                  Circuit& circuit) {
  for (const auto& schema : element_schemas()) {
    if (schema.section != section) continue;
    TableReader reader(table, file, section_of(section), schema.keys, peek_name(table));
    reader.set_element(read_name(reader, "element"));
    schema.read(reader, circuit);
    return;
  }
}

std::vector<NamedPlace> read_pwm(const toml::table& table, const std::string& file,
                                 Circuit& circuit) {
  TableReader reader(table, file, "[[pwm]]", {"name", "frequency", "duty", "phase", "soft_start"},
                     peek_name(table));
  reader.set_element(read_name(reader, "modulator"));
  PwmModulator m;
  read_pwm_common(reader, m);
  circuit.add_modulator(m);
  return {{m.name, m.where}};
}

std::vector<NamedPlace> read_complementary_pwm(const toml::table& table, const std::string& file,
                                               Circuit& circuit) {
  TableReader reader(table, file, "[[complementary_pwm]]",
                     {"name", "frequency", "duty", "phase", "dead_time", "soft_start"},
                     peek_name(table));
  reader.set_element(read_name(reader, "modulator"));
  ComplementaryPwm m;
  read_pwm_common(reader, m);
  m.dead_time_s = reader.value("dead_time", Unit::kSecond, Range::non_negative(), "\"50 ns\"");
  check_dead_time(reader, m);
  circuit.add_modulator(m);
  return {{m.name + ".high", m.where}, {m.name + ".low", m.where}};
}

std::vector<NamedPlace> read_schedule(const toml::table& table, const std::string& file,
                                      Circuit& circuit) {
  TableReader reader(table, file, "[[schedule]]", {"name", "initial", "changes"}, peek_name(table));
  reader.set_element(read_name(reader, "schedule"));
  GateSchedule g;
  g.name = reader.element();
  g.where = reader.location();
  if (const toml::node* initial = reader.find("initial")) {
    g.initial_on = read_gate_state(reader, *initial, "initial");
  }
  const std::string example = "[[\"2 ms\", \"on\"], [\"5 ms\", \"off\"]]";
  if (const toml::array* changes = reader.array_or_null("changes", example)) {
    for (const toml::node& change : *changes) {
      const auto* pair = change.as_array();
      if (!pair || pair->size() != 2) {
        reader.fail(ErrorKind::kInvalidValue, &change, "each change must be a [time, state] pair",
                    "write e.g. changes = " + example);
      }
      const double t = reader.value_at(*pair->get(0), "change time", Unit::kSecond,
                                       Range::non_negative(), "\"2 ms\"");
      if (!g.changes.empty() && !(t > g.changes.back().first)) {
        reader.fail(ErrorKind::kInvalidValue, &change,
                    "change times must increase strictly; " + format_si_value(t, Unit::kSecond) +
                        " does not come after " +
                        format_si_value(g.changes.back().first, Unit::kSecond),
                    "list the changes in time order");
      }
      g.changes.emplace_back(t, read_gate_state(reader, *pair->get(1), "a change's state"));
    }
  }
  circuit.add_modulator(g);
  return {{g.name, g.where}};
}

}  // namespace pulsewise::detail
