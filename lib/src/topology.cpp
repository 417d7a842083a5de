// Structural checks before simulating. Each check names every element it involves.
#include "pulsewise/topology.hpp"

#include "pulsewise/configuration_model.hpp"

#include <cmath>
#include <deque>
#include <map>
#include <set>
#include <sstream>

#include "detail/node_graph.hpp"
#include "detail/union_find.hpp"

namespace pulsewise {
namespace detail {

std::vector<int> forest_path(const NodeGraph& graph, const std::vector<int>& forest_elements,
                             int from, int to) {
  std::multimap<int, std::pair<int, int>> adjacency;  // node -> (element, other node)
  for (int e : forest_elements) {
    adjacency.emplace(graph.node_a[e], std::pair{e, graph.node_b[e]});
    adjacency.emplace(graph.node_b[e], std::pair{e, graph.node_a[e]});
  }
  std::map<int, std::pair<int, int>> reached;  // node -> (via element, previous node)
  std::deque<int> queue{from};
  reached[from] = {-1, -1};
  while (!queue.empty()) {
    const int node = queue.front();
    queue.pop_front();
    if (node == to) break;
    auto [lo, hi] = adjacency.equal_range(node);
    for (auto it = lo; it != hi; ++it) {
      const int next = it->second.second;
      if (reached.count(next)) continue;
      reached[next] = {it->second.first, node};
      queue.push_back(next);
    }
  }
  std::vector<int> path;
  if (!reached.count(to)) return path;
  for (int node = to; node != from; node = reached[node].second)
    path.push_back(reached[node].first);
  return path;
}

}  // namespace detail

namespace {

using detail::NodeGraph;
using detail::UnionFind;

[[noreturn]] void fail(ErrorKind kind, const Element& e, const std::string& problem,
                       const std::string& fix, std::vector<std::string> involved = {}) {
  throw InputError(kind, e.name, problem, fix, e.where, std::move(involved));
}

std::string quote_list(const std::vector<std::string>& names) {
  std::ostringstream out;
  for (std::size_t k = 0; k < names.size(); ++k) out << (k ? ", '" : "'") << names[k] << "'";
  return out.str();
}

void require_positive(const Element& e, double v, const char* what, const char* unit) {
  if (!std::isfinite(v) || v <= 0) {
    std::ostringstream p;
    p << what << " is " << v << " " << unit << " but must be finite and positive";
    fail(ErrorKind::kInvalidValue, e, p.str(), std::string("give a positive ") + what);
  }
}

void require_non_negative(const Element& e, double v, const char* what, const char* unit) {
  if (!std::isfinite(v) || v < 0) {
    std::ostringstream p;
    p << what << " is " << v << " " << unit << " but must be finite and not negative";
    fail(ErrorKind::kInvalidValue, e, p.str(), std::string("give a ") + what + " of 0 or more");
  }
}

void check_waveform(const Element& e) {
  const Waveform& w = e.waveform;
  if (w.is_sinusoidal() &&
      !(std::isfinite(w.offset()) && std::isfinite(w.amplitude()) && std::isfinite(w.phase_rad()) &&
        std::isfinite(w.frequency_hz()) && w.frequency_hz() > 0))
    fail(ErrorKind::kInvalidValue, e, "sine waveform needs finite values and a positive frequency",
         "give offset, amplitude and phase as finite numbers and a frequency in Hz above 0");
  const auto& pts = e.waveform.points();
  for (std::size_t k = 0; k < pts.size(); ++k) {
    if (!std::isfinite(pts[k].first) || !std::isfinite(pts[k].second))
      fail(ErrorKind::kInvalidValue, e, "source waveform has a non-finite time or value",
           "give finite numbers in the waveform");
    if (e.waveform.kind() == Waveform::Kind::kPiecewiseLinear && k > 0 &&
        !(pts[k].first > pts[k - 1].first))
      fail(ErrorKind::kInvalidValue, e,
           "piecewise-linear table times are not strictly increasing at point " +
               std::to_string(k + 1),
           "list the points in increasing time, each time once");
  }
}

void check_values(const Element& e) {
  if (e.node_a == e.node_b)
    fail(ErrorKind::kInvalidValue, e, "both terminals are on node '" + e.node_a + "'",
         "connect the element between two different nodes");
  switch (e.kind) {
    case ElementKind::kResistor: require_positive(e, e.value, "resistance", "ohm"); break;
    case ElementKind::kInductor:
      require_positive(e, e.value, "inductance", "H");
      require_non_negative(e, e.series_resistance_ohm, "winding resistance", "ohm");
      require_non_negative(e, e.saturation_current_a, "saturation current", "A");
      if (e.saturation_current_a > 0 &&
          !(e.saturated_inductance_h > 0 && e.saturated_inductance_h < e.value))
        fail(ErrorKind::kInvalidValue, e,
             "saturated inductance must be positive and below the unsaturated inductance",
             "give a saturated inductance between 0 and " + std::to_string(e.value) + " H");
      break;
    case ElementKind::kConstantPowerLoad:
      require_positive(e, e.power_w, "power", "W");
      require_positive(e, e.cut_in_voltage_v, "cut-in voltage", "V");
      break;
    case ElementKind::kCapacitor:
      require_positive(e, e.value, "capacitance", "F");
      require_non_negative(e, e.series_resistance_ohm, "series resistance", "ohm");
      break;
    case ElementKind::kVoltageSource:
    case ElementKind::kCurrentSource: check_waveform(e); break;
    case ElementKind::kDiode:
      require_non_negative(e, e.forward_voltage_v, "forward voltage", "V");
      [[fallthrough]];
    case ElementKind::kSwitch:
      require_non_negative(e, e.on_resistance_ohm, "on-resistance", "ohm");
      if (!(e.off_resistance_ohm > 0) || std::isnan(e.off_resistance_ohm))
        fail(ErrorKind::kInvalidValue, e, "off-resistance must be positive",
             "give a positive off-resistance or leave the off-state open");
      if (e.off_resistance_ohm <= e.on_resistance_ohm)
        fail(ErrorKind::kInvalidValue, e, "off-resistance is not larger than on-resistance",
             "make the off-state resistance much larger than the on-resistance");
      break;
  }
  if (!std::isfinite(e.initial_value))
    fail(ErrorKind::kInvalidValue, e, "initial condition is not finite", "give a finite number");
}

void check_modulator_common(const std::string& name, double frequency_hz, double duty, double phase,
                            const SoftStart& soft, const SourceLocation& where) {
  auto bad = [&](const std::string& problem, const std::string& fix) {
    throw InputError(ErrorKind::kInvalidValue, name, problem, fix, where);
  };
  if (!std::isfinite(frequency_hz) || frequency_hz <= 0)
    bad("switching frequency must be finite and positive", "give a frequency in Hz");
  if (!(duty >= 0 && duty <= 1)) bad("duty cycle must be between 0 and 1", "give a duty in 0..1");
  if (!(phase >= 0 && phase < 1))
    bad("phase must be a fraction of the period in [0, 1)", "give a phase in 0..1");
  if (!(soft.initial_duty >= 0 && soft.initial_duty <= 1))
    bad("soft-start initial duty must be between 0 and 1", "give an initial duty in 0..1");
  if (soft.periods < 0) bad("soft-start length is negative", "give 0 or more periods");
}

std::set<std::string> check_modulators(const Circuit& c) {
  std::set<std::string> gates, names;
  auto add_name = [&](const std::string& name, const SourceLocation& where) {
    if (name.empty())
      throw InputError(ErrorKind::kInvalidValue, name, "a modulator has no name", "name it", where);
    if (!names.insert(name).second)
      throw InputError(ErrorKind::kDuplicateName, name, "two modulators share this name",
                       "give each modulator its own name", where);
  };
  for (const auto& m : c.pwm_modulators()) {
    add_name(m.name, m.where);
    check_modulator_common(m.name, m.frequency_hz, m.duty_cycle, m.phase, m.soft_start, m.where);
    gates.insert(m.name);
  }
  for (const auto& m : c.complementary_modulators()) {
    add_name(m.name, m.where);
    check_modulator_common(m.name, m.frequency_hz, m.duty_cycle, m.phase, m.soft_start, m.where);
    const double period = 1.0 / m.frequency_hz;
    if (!std::isfinite(m.dead_time_s) || m.dead_time_s < 0 || 2 * m.dead_time_s >= period)
      throw InputError(ErrorKind::kInvalidValue, m.name,
                       "dead time must be at least 0 and shorter than half the period",
                       "give a dead time well below " + std::to_string(period / 2) + " s", m.where);
    gates.insert(m.name + ".high");
    gates.insert(m.name + ".low");
  }
  for (const auto& s : c.gate_schedules()) {
    add_name(s.name, s.where);
    for (std::size_t k = 0; k < s.changes.size(); ++k) {
      if (!std::isfinite(s.changes[k].first) ||
          (k > 0 && !(s.changes[k].first > s.changes[k - 1].first)))
        throw InputError(ErrorKind::kInvalidValue, s.name,
                         "schedule times must be finite and strictly increasing",
                         "list each change time once, in increasing order", s.where);
    }
    gates.insert(s.name);
  }
  return gates;
}

void check_names(const Circuit& c, const NodeGraph& graph, const std::set<std::string>& gates) {
  std::map<std::string, const Element*> seen;
  std::set<std::string> nodes(graph.names.begin(), graph.names.end());
  for (const Element& e : c.elements()) {
    if (e.name.empty())
      fail(ErrorKind::kInvalidValue, e, "an element has no name", "give every element a name");
    if (e.node_a.empty() || e.node_b.empty())
      fail(ErrorKind::kUnknownNode, e, "a terminal has an empty node name", "name both nodes");
    if (!seen.emplace(e.name, &e).second)
      fail(ErrorKind::kDuplicateName, e, "another element already has this name",
           "rename one of the two", {e.name});
    if (nodes.count(e.name))
      fail(ErrorKind::kDuplicateName, e, "a node has the same name as this element",
           "rename the node or the element so that signal names stay unambiguous");
    if (e.kind == ElementKind::kSwitch && !gates.count(e.gate))
      fail(ErrorKind::kUnknownGate, e, "gate signal '" + e.gate + "' is provided by no modulator",
           "name a modulator (a complementary pair provides '<name>.high' and '<name>.low')");
  }
}

void check_connectivity(const Circuit& c, const NodeGraph& graph) {
  const int n = graph.ground() + 1;
  std::vector<std::vector<std::string>> attached(n);
  UnionFind all(n);
  for (std::size_t k = 0; k < c.elements().size(); ++k) {
    attached[graph.node_a[k]].push_back(c.elements()[k].name);
    attached[graph.node_b[k]].push_back(c.elements()[k].name);
    all.unite(graph.node_a[k], graph.node_b[k]);
  }
  for (int node = 0; node < graph.ground(); ++node) {
    const std::string& name = graph.names[node];
    if (attached[node].size() < 2)
      throw InputError(ErrorKind::kFloatingNode, attached[node].front(),
                       "node '" + name + "' has only this one connection",
                       "connect node '" + name + "' to a second element or remove it",
                       c.elements()[c.find_element(attached[node].front())].where, attached[node]);
    if (all.find(node) != all.find(graph.ground()))
      throw InputError(ErrorKind::kFloatingNode, attached[node].front(),
                       "node '" + name + "' is not connected to ground through any element",
                       "connect this part of the circuit to ground (node '0' or 'gnd')",
                       c.elements()[c.find_element(attached[node].front())].where, attached[node]);
  }
  if (c.elements().empty())
    throw InputError(ErrorKind::kFloatingNode, "", "the circuit has no elements", "add elements");
}

bool is_voltage_type_always(const Element& e) {
  return e.kind == ElementKind::kVoltageSource ||
         (e.kind == ElementKind::kCapacitor && e.series_resistance_ohm == 0.0);
}

void check_voltage_loops(const Circuit& c, const NodeGraph& graph) {
  UnionFind uf(graph.ground() + 1);
  std::vector<int> forest;
  for (std::size_t k = 0; k < c.elements().size(); ++k) {
    const Element& e = c.elements()[k];
    if (!is_voltage_type_always(e)) continue;
    if (uf.unite(graph.node_a[k], graph.node_b[k])) {
      forest.push_back(static_cast<int>(k));
      continue;
    }
    std::vector<std::string> loop{e.name};
    for (int m : detail::forest_path(graph, forest, graph.node_a[k], graph.node_b[k]))
      loop.push_back(c.elements()[m].name);
    fail(ErrorKind::kVoltageLoop, e,
         "closes a loop of voltage sources and capacitors without resistance: " + quote_list(loop),
         "give a capacitor in the loop a series resistance (ESR) or remove one element", loop);
  }
}

void check_current_cutsets(const Circuit& c, const NodeGraph& graph) {
  // Contract everything that can carry a current that is not fixed by a state or a source.
  UnionFind uf(graph.ground() + 1);
  for (std::size_t k = 0; k < c.elements().size(); ++k) {
    const auto kind = c.elements()[k].kind;
    if (kind != ElementKind::kInductor && kind != ElementKind::kCurrentSource &&
        kind != ElementKind::kConstantPowerLoad)
      uf.unite(graph.node_a[k], graph.node_b[k]);
  }
  const int ground = uf.find(graph.ground());
  std::map<int, std::vector<std::string>> cutsets;
  for (std::size_t k = 0; k < c.elements().size(); ++k) {
    const int a = uf.find(graph.node_a[k]), b = uf.find(graph.node_b[k]);
    if (a == b) continue;
    if (a != ground) cutsets[a].push_back(c.elements()[k].name);
    if (b != ground) cutsets[b].push_back(c.elements()[k].name);
  }
  for (const auto& [group, names] : cutsets) {
    const Element& e = c.elements()[c.find_element(names.front())];
    fail(ErrorKind::kCurrentCutset, e,
         "forms a cutset of inductors and current sources only: " + quote_list(names) +
             "; their currents are forced equal and no device or resistor can relieve them",
         "add a resistor, capacitor or device across the cutset, or merge series inductors", names);
  }
}

}  // namespace

void check_circuit(const Circuit& circuit) {
  for (const Element& e : circuit.elements()) check_values(e);
  const std::set<std::string> gates = check_modulators(circuit);
  const NodeGraph graph(circuit);
  check_names(circuit, graph, gates);
  check_connectivity(circuit, graph);
  std::size_t devices = 0;
  for (const Element& e : circuit.elements()) devices += e.is_device() ? 1 : 0;
  if (devices > kMaxDevices)
    throw InputError(ErrorKind::kTooManyDevices, "",
                     "the circuit has " + std::to_string(devices) + " switches and diodes",
                     "use at most " + std::to_string(kMaxDevices));
  check_voltage_loops(circuit, graph);
  check_current_cutsets(circuit, graph);
}

}  // namespace pulsewise
