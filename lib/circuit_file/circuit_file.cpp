// The circuit-file loader: TOML text -> CircuitFile. The schema is in docs/circuit-file.md.
#include "pulsewise/circuit_file.hpp"

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <sstream>

#include "loader.hpp"
#include "suggest.hpp"

namespace pulsewise {

namespace {

using detail::NamedPlace;
using detail::TableReader;

const std::vector<std::string>& modulator_section_keys() {
  static const std::vector<std::string> keys{"pwm", "complementary_pwm", "schedule"};
  return keys;
}

std::vector<std::string> top_level_keys() {
  std::vector<std::string> keys{"circuit", "run", "record"};
  for (const auto& k : detail::element_section_keys()) keys.push_back(k);
  for (const auto& k : modulator_section_keys()) keys.push_back(k);
  return keys;
}

toml::table parse_toml(std::string_view text, const std::string& file) {
  try {
    return toml::parse(text, file);
  } catch (const toml::parse_error& e) {
    throw InputError(ErrorKind::kFileSyntax, "", "not valid TOML: " + std::string(e.description()),
                     "correct the TOML syntax here; values with units are strings and need "
                     "quotes, e.g. inductance = \"10 uH\"",
                     detail::location_of(e.source(), file));
  }
}

// Every entry of an element or modulator section, which must be an array of tables ([[x]]).
std::vector<const toml::table*> entries(const TableReader& root, const std::string& key) {
  std::vector<const toml::table*> out;
  const toml::node* node = root.find(key);
  if (!node) return out;
  if (!node->is_array_of_tables()) {
    root.fail(ErrorKind::kInvalidValue, node,
              "'" + key + "' must be an array of tables, one [[" + key + "]] block per " + key,
              "write [[" + key + "]] (double brackets) above each " + key);
  }
  for (const toml::node& item : *node->as_array()) out.push_back(item.as_table());
  return out;
}

const toml::table* single_table(const TableReader& root, const std::string& key) {
  const toml::node* node = root.find(key);
  if (!node) return nullptr;
  if (!node->is_table()) {
    root.fail(ErrorKind::kInvalidValue, node, "'" + key + "' must be a table",
              "write a [" + key + "] header with its keys below");
  }
  return node->as_table();
}

std::string default_name(const std::string& file) {
  const std::string stem = std::filesystem::path(file).stem().string();
  return stem.empty() ? std::string("circuit") : stem;
}

struct Header {
  std::string name;
  std::string description;
};

Header read_header(const TableReader& root, const std::string& file) {
  Header h;
  h.name = default_name(file);
  const toml::table* table = single_table(root, "circuit");
  if (!table) return h;
  const TableReader circuit(*table, file, "[circuit]", {"name", "description"});
  h.name = circuit.string_or("name", h.name);
  h.description = circuit.string_or("description", "");
  return h;
}

// Elements in file order, whatever their kind (TOML tables do not keep the order of keys).
void read_elements(const TableReader& root, const std::string& file, Circuit& circuit) {
  std::vector<std::pair<const toml::table*, std::string>> all;
  for (const auto& section : detail::element_section_keys()) {
    for (const toml::table* t : entries(root, section)) all.emplace_back(t, section);
  }
  std::stable_sort(all.begin(), all.end(), [](const auto& a, const auto& b) {
    return a.first->source().begin < b.first->source().begin;
  });
  for (const auto& [table, section] : all) detail::read_element(section, *table, file, circuit);
}

std::vector<NamedPlace> read_modulators(const TableReader& root, const std::string& file,
                                        Circuit& circuit) {
  std::vector<NamedPlace> gates;
  const auto add = [&gates](std::vector<NamedPlace> more) {
    gates.insert(gates.end(), more.begin(), more.end());
  };
  for (const toml::table* t : entries(root, "pwm")) add(detail::read_pwm(*t, file, circuit));
  for (const toml::table* t : entries(root, "complementary_pwm")) {
    add(detail::read_complementary_pwm(*t, file, circuit));
  }
  for (const toml::table* t : entries(root, "schedule")) {
    add(detail::read_schedule(*t, file, circuit));
  }
  return gates;
}

std::string where_text(const SourceLocation& w) {
  return w.file + ":" + std::to_string(w.line) + ":" + std::to_string(w.column);
}

std::vector<NamedPlace> modulator_places(const Circuit& circuit) {
  std::vector<NamedPlace> out;
  for (const auto& m : circuit.pwm_modulators()) out.push_back({m.name, m.where});
  for (const auto& m : circuit.complementary_modulators()) out.push_back({m.name, m.where});
  for (const auto& m : circuit.gate_schedules()) out.push_back({m.name, m.where});
  return out;
}

void check_unique(const std::vector<NamedPlace>& names, std::string_view what) {
  std::map<std::string, SourceLocation> seen;
  for (const auto& n : names) {
    auto [it, fresh] = seen.emplace(n.name, n.where);
    if (fresh) continue;
    throw InputError(
        ErrorKind::kDuplicateName, n.name,
        std::string(what) + " name '" + n.name + "' is already used at " + where_text(it->second),
        "give each " + std::string(what) + " its own name", n.where);
  }
}

std::vector<NamedPlace> element_places(const Circuit& circuit) {
  std::vector<NamedPlace> out;
  for (const Element& e : circuit.elements()) out.push_back({e.name, e.where});
  return out;
}

// "out.v" would be ambiguous if an element were also called "out".
void check_elements_are_not_nodes(const Circuit& circuit) {
  const std::set<std::string> nodes = detail::node_names(circuit);
  for (const Element& e : circuit.elements()) {
    if (!nodes.count(e.name)) continue;
    throw InputError(ErrorKind::kDuplicateName, e.name,
                     "'" + e.name + "' names both an element and a node, so the signal '" + e.name +
                         ".v' would be ambiguous",
                     "rename the element or the node", e.where);
  }
}

void check_gates(const Circuit& circuit, const std::vector<NamedPlace>& gates) {
  std::vector<std::string> names;
  for (const auto& g : gates) names.push_back(g.name);
  for (const Element& e : circuit.elements()) {
    if (e.kind != ElementKind::kSwitch) continue;
    if (std::find(names.begin(), names.end(), e.gate) != names.end()) continue;
    std::string fix;
    if (std::find(names.begin(), names.end(), e.gate + ".high") != names.end()) {
      fix = "a complementary_pwm provides two gates: write gate = \"" + e.gate +
            ".high\" or gate = \"" + e.gate + ".low\"";
    } else if (names.empty()) {
      fix = "add a [[pwm]], [[complementary_pwm]] or [[schedule]] named '" + e.gate + "'";
    } else {
      fix = detail::did_you_mean(e.gate, names);
      if (fix.empty())
        fix = "name a gate a modulator provides, or add a [[pwm]] named '" + e.gate + "'";
    }
    throw InputError(ErrorKind::kUnknownGate, e.name,
                     "gate '" + e.gate +
                         "' is not provided by "
                         "any [[pwm]], [[complementary_pwm]] or [[schedule]]",
                     fix, e.where);
  }
}

SourceLocation section_location(const TableReader& root, const std::string& key) {
  const toml::node* node = root.find(key);
  if (node) return root.location(*node);
  SourceLocation w;
  w.file = root.file();
  return w;
}

double switching_period(const Circuit& circuit, const SimulationOptions& sim,
                        const TableReader& root) {
  if (sim.switching_period_s > 0.0) return sim.switching_period_s;
  const double t = circuit.first_modulator_period_s();
  if (t > 0.0) return t;
  throw InputError(ErrorKind::kInvalidOption, "",
                   "nothing sets the switching period: there is no [[pwm]] or "
                   "[[complementary_pwm]] and [run] has no switching_period",
                   "set [run] switching_period = \"10 us\" (the length of one cycle)",
                   section_location(root, "run"));
}

// The lead's validate() knows nothing of files; give its message the file position.
template <typename Options>
void validate_at(const Options& options, const SourceLocation& where) {
  try {
    options.validate();
  } catch (const InputError& e) {
    throw InputError(e.kind(), e.element(), e.problem(), e.fix(), where);
  }
}

std::string read_file(const std::string& path) {
  std::error_code ec;
  const auto status = std::filesystem::status(path, ec);
  const SourceLocation where{path, 0, 0};
  if (ec || !std::filesystem::exists(status)) {
    throw InputError(ErrorKind::kFileSyntax, "", "the circuit file does not exist",
                     "check the path and the current directory", where);
  }
  if (std::filesystem::is_directory(status)) {
    throw InputError(ErrorKind::kFileSyntax, "", "this is a directory, not a circuit file",
                     "give the path of a .toml circuit file", where);
  }
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  if (in) text << in.rdbuf();
  if (!in || in.bad()) {
    throw InputError(ErrorKind::kFileSyntax, "", "the circuit file cannot be read",
                     "check that the file is readable (permissions)", where);
  }
  return text.str();
}

}  // namespace

CircuitFile parse_circuit_text(std::string_view text, std::string path_label) {
  const std::string& file = path_label;
  const toml::table root_table = parse_toml(text, file);
  const TableReader root(root_table, file, "the top level of the file", top_level_keys());
  const Header header = read_header(root, file);
  Circuit circuit(header.name);
  const std::vector<NamedPlace> gates = read_modulators(root, file, circuit);
  check_unique(modulator_places(circuit), "modulator");
  read_elements(root, file, circuit);
  if (circuit.elements().empty()) {
    throw InputError(
        ErrorKind::kMissingKey, "", "the file defines no elements",
        "add [[resistor]], [[inductor]], [[capacitor]], [[voltage_source]], ... blocks "
        "(see docs/circuit-file.md)",
        SourceLocation{file, 1, 1});
  }
  check_unique(element_places(circuit), "element");
  check_elements_are_not_nodes(circuit);
  check_gates(circuit, gates);

  SimulationOptions sim = detail::read_run(single_table(root, "run"), file, circuit);
  const double period_s = switching_period(circuit, sim, root);
  RecordingOptions rec =
      detail::read_record(single_table(root, "record"), file, circuit, period_s, sim);
  validate_at(sim, section_location(root, "run"));
  validate_at(rec, section_location(root, "record"));

  CircuitFile out;
  out.path = std::move(path_label);
  out.text = std::string(text);
  out.description = header.description;
  out.circuit = std::move(circuit);
  out.simulation = std::move(sim);
  out.recording = std::move(rec);
  return out;
}

CircuitFile load_circuit_file(const std::string& path) {
  const std::string text = read_file(path);
  CircuitFile out = parse_circuit_text(text, path);
  auto& trace = out.recording.output_path;
  if (!trace.empty() && std::filesystem::path(trace).is_relative()) {
    trace = (std::filesystem::path(path).parent_path() / trace).lexically_normal().string();
  }
  return out;
}

}  // namespace pulsewise
