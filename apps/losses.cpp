#include "losses.hpp"

#include <cmath>

namespace pulsewise::app {
namespace {

bool is_source(const Element& e) {
  return e.kind == ElementKind::kVoltageSource || e.kind == ElementKind::kCurrentSource;
}

bool is_load(const Element& e, const std::string& output_node) {
  const bool load_kind =
      e.kind == ElementKind::kResistor || e.kind == ElementKind::kConstantPowerLoad;
  if (!load_kind || output_node.empty()) return false;
  return (e.node_a == output_node && Circuit::is_ground(e.node_b)) ||
         (e.node_b == output_node && Circuit::is_ground(e.node_a));
}

// "out.v" names node "out" unless an element is called "out" (then it is that element's voltage).
std::string output_node_of(const Circuit& circuit, const std::string& output_signal) {
  if (output_signal.size() <= 2 || !output_signal.ends_with(".v")) return {};
  const std::string base = output_signal.substr(0, output_signal.size() - 2);
  return circuit.find_element(base) < 0 ? base : std::string();
}

}  // namespace

PowerBalance power_balance(const Circuit& circuit, const RunSummary& summary, double period_s,
                           const std::string& output_signal) {
  PowerBalance b;
  const CycleMetrics& c = summary.last_cycle;
  if (period_s <= 0.0 || c.element_energy.empty()) return b;
  b.input_w = c.energy_in_j / period_s;
  b.dissipated_w = c.dissipated_j / period_s;
  const std::string output_node = output_node_of(circuit, output_signal);
  double attributed = 0.0;
  for (const ElementEnergy& energy : c.element_energy) {
    if (energy.element < 0 || energy.element >= static_cast<int>(circuit.elements().size())) {
      continue;
    }
    const Element& e = circuit.elements()[energy.element];
    if (is_source(e)) continue;
    const double loss_w = energy.energy_j / period_s;
    if (is_load(e, output_node)) {
      b.load_elements.push_back(e.name);
      b.load_w += loss_w;
      continue;
    }
    attributed += loss_w;
    // Ideal devices integrate to round-off around zero; they are not losses.
    if (std::abs(loss_w) > 1e-12 * std::abs(b.input_w)) b.losses.push_back({e.name, loss_w});
  }
  b.load_known = !b.load_elements.empty();
  b.unattributed_w = b.dissipated_w - b.load_w - attributed;
  if (b.load_known && b.input_w > 0.0) b.efficiency = b.load_w / b.input_w;
  return b;
}

}  // namespace pulsewise::app
