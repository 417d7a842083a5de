#include "losses.hpp"

#include <cmath>
#include <optional>

namespace pulsewise::app {
namespace {

// Statistics of a recorded signal by name, or nullptr.
const SignalStats* stats_of(const RunSummary& s, const std::string& name) {
  for (std::size_t i = 0; i < s.recorded.size() && i < s.last_cycle.signals.size(); ++i) {
    if (s.recorded[i].name == name) return &s.last_cycle.signals[i];
  }
  return nullptr;
}

// The voltage across a two-terminal element from recorded node voltages, when one end is ground
// (the common case of a load across the output).
const SignalStats* voltage_across(const RunSummary& s, const Element& e) {
  if (const SignalStats* v = stats_of(s, e.name + ".v")) return v;
  if (Circuit::is_ground(e.node_b)) return stats_of(s, e.node_a + ".v");
  if (Circuit::is_ground(e.node_a)) return stats_of(s, e.node_b + ".v");
  return nullptr;
}

double square(double x) { return x * x; }

// Average loss of one element over the period, W; nullopt when the recorded signals do not
// determine it exactly.
std::optional<double> element_loss(const RunSummary& s, const Element& e) {
  const SignalStats* i = stats_of(s, e.name + ".i");
  switch (e.kind) {
    case ElementKind::kResistor:
      if (i) return square(i->rms) * e.value;
      if (const SignalStats* v = voltage_across(s, e)) return square(v->rms) / e.value;
      return std::nullopt;
    case ElementKind::kInductor:
    case ElementKind::kCapacitor:
      if (e.series_resistance_ohm == 0.0) return 0.0;
      if (i) return square(i->rms) * e.series_resistance_ohm;
      return std::nullopt;
    case ElementKind::kSwitch:
    case ElementKind::kDiode: {
      const bool lossless_on = e.on_resistance_ohm == 0.0 && e.forward_voltage_v == 0.0;
      if (!std::isinf(e.off_resistance_ohm)) return std::nullopt;  // off-state current too
      if (lossless_on) return 0.0;
      if (!i) return std::nullopt;
      return square(i->rms) * e.on_resistance_ohm + e.forward_voltage_v * i->average;
    }
    case ElementKind::kVoltageSource:
    case ElementKind::kCurrentSource: return 0.0;
    // Its power is the period average of v * i, which per-signal statistics do not give.
    case ElementKind::kConstantPowerLoad: return std::nullopt;
  }
  return std::nullopt;
}

bool is_load(const Element& e, const std::string& output_node) {
  const bool load_kind =
      e.kind == ElementKind::kResistor || e.kind == ElementKind::kConstantPowerLoad;
  if (!load_kind || output_node.empty()) return false;
  return (e.node_a == output_node && Circuit::is_ground(e.node_b)) ||
         (e.node_b == output_node && Circuit::is_ground(e.node_a));
}

}  // namespace

PowerBalance power_balance(const Circuit& circuit, const RunSummary& summary, double period_s,
                           const std::string& output_signal) {
  PowerBalance b;
  if (period_s <= 0.0) return b;
  b.input_w = summary.last_cycle.energy_in_j / period_s;
  b.dissipated_w = summary.last_cycle.dissipated_j / period_s;
  std::string output_node;
  if (output_signal.size() > 2 && output_signal.ends_with(".v") &&
      circuit.find_element(output_signal.substr(0, output_signal.size() - 2)) < 0) {
    output_node = output_signal.substr(0, output_signal.size() - 2);
  }
  double attributed = 0.0;
  bool load_complete = true;
  for (const Element& e : circuit.elements()) {
    const std::optional<double> loss = element_loss(summary, e);
    if (is_load(e, output_node)) {
      b.load_elements.push_back(e.name);
      if (loss) b.load_w += *loss;
      load_complete = load_complete && loss.has_value();
      continue;
    }
    if (!loss) {
      b.unattributed.push_back(e.name);
    } else if (*loss != 0.0) {
      b.losses.push_back({e.name, *loss});
      attributed += *loss;
    }
  }
  b.load_known = !b.load_elements.empty() && load_complete;
  if (b.load_known) {
    b.unattributed_w = b.dissipated_w - b.load_w - attributed;
    if (b.input_w > 0.0) b.efficiency = b.load_w / b.input_w;
  } else {
    b.unattributed_w = b.dissipated_w - attributed;
  }
  return b;
}

}  // namespace pulsewise::app
