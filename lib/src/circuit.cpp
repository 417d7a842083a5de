#include "pulsewise/circuit.hpp"

namespace pulsewise {

const char* to_string(ElementKind kind) {
  switch (kind) {
    case ElementKind::kResistor: return "resistor";
    case ElementKind::kInductor: return "inductor";
    case ElementKind::kCapacitor: return "capacitor";
    case ElementKind::kVoltageSource: return "voltage source";
    case ElementKind::kCurrentSource: return "current source";
    case ElementKind::kSwitch: return "switch";
    case ElementKind::kDiode: return "diode";
    case ElementKind::kConstantPowerLoad: return "constant-power load";
  }
  return "element";
}

namespace {

Element make_element(ElementKind kind, std::string name, std::string a, std::string b,
                     SourceLocation where) {
  Element e;
  e.kind = kind;
  e.name = std::move(name);
  e.node_a = std::move(a);
  e.node_b = std::move(b);
  e.where = std::move(where);
  return e;
}

}  // namespace

Circuit& Circuit::add_resistor(std::string name, std::string node_a, std::string node_b,
                               double resistance_ohm, SourceLocation where) {
  Element e = make_element(ElementKind::kResistor, std::move(name), std::move(node_a),
                           std::move(node_b), std::move(where));
  e.value = resistance_ohm;
  elements_.push_back(std::move(e));
  return *this;
}

Circuit& Circuit::add_inductor(std::string name, std::string node_a, std::string node_b,
                               double inductance_h, InductorOptions options, SourceLocation where) {
  Element e = make_element(ElementKind::kInductor, std::move(name), std::move(node_a),
                           std::move(node_b), std::move(where));
  e.value = inductance_h;
  e.series_resistance_ohm = options.winding_resistance_ohm;
  e.initial_value = options.initial_current_a;
  e.saturation_current_a = options.saturation_current_a;
  e.saturated_inductance_h = options.saturated_inductance_h;
  elements_.push_back(std::move(e));
  return *this;
}

Circuit& Circuit::add_capacitor(std::string name, std::string node_a, std::string node_b,
                                double capacitance_f, CapacitorOptions options,
                                SourceLocation where) {
  Element e = make_element(ElementKind::kCapacitor, std::move(name), std::move(node_a),
                           std::move(node_b), std::move(where));
  e.value = capacitance_f;
  e.series_resistance_ohm = options.series_resistance_ohm;
  e.initial_value = options.initial_voltage_v;
  elements_.push_back(std::move(e));
  return *this;
}

Circuit& Circuit::add_voltage_source(std::string name, std::string plus, std::string minus,
                                     Waveform voltage_v, SourceLocation where) {
  Element e = make_element(ElementKind::kVoltageSource, std::move(name), std::move(plus),
                           std::move(minus), std::move(where));
  e.waveform = std::move(voltage_v);
  elements_.push_back(std::move(e));
  return *this;
}

Circuit& Circuit::add_current_source(std::string name, std::string plus, std::string minus,
                                     Waveform current_a, SourceLocation where) {
  Element e = make_element(ElementKind::kCurrentSource, std::move(name), std::move(plus),
                           std::move(minus), std::move(where));
  e.waveform = std::move(current_a);
  elements_.push_back(std::move(e));
  return *this;
}

Circuit& Circuit::add_switch(std::string name, std::string node_a, std::string node_b,
                             std::string gate, SwitchOptions options, SourceLocation where) {
  Element e = make_element(ElementKind::kSwitch, std::move(name), std::move(node_a),
                           std::move(node_b), std::move(where));
  e.gate = std::move(gate);
  e.on_resistance_ohm = options.on_resistance_ohm;
  e.off_resistance_ohm = options.off_resistance_ohm;
  elements_.push_back(std::move(e));
  return *this;
}

Circuit& Circuit::add_diode(std::string name, std::string anode, std::string cathode,
                            DiodeOptions options, SourceLocation where) {
  Element e = make_element(ElementKind::kDiode, std::move(name), std::move(anode),
                           std::move(cathode), std::move(where));
  e.on_resistance_ohm = options.on_resistance_ohm;
  e.off_resistance_ohm = options.off_resistance_ohm;
  e.forward_voltage_v = options.forward_voltage_v;
  elements_.push_back(std::move(e));
  return *this;
}

Circuit& Circuit::add_constant_power_load(std::string name, std::string node_a, std::string node_b,
                                          double power_w, ConstantPowerOptions options,
                                          SourceLocation where) {
  Element e = make_element(ElementKind::kConstantPowerLoad, std::move(name), std::move(node_a),
                           std::move(node_b), std::move(where));
  e.power_w = power_w;
  e.cut_in_voltage_v = options.cut_in_voltage_v;
  elements_.push_back(std::move(e));
  return *this;
}

bool Circuit::has_nonlinear_elements() const {
  for (const Element& e : elements_)
    if (e.is_nonlinear()) return true;
  return false;
}

Circuit& Circuit::add_modulator(PwmModulator modulator) {
  pwm_.push_back(std::move(modulator));
  return *this;
}

Circuit& Circuit::add_modulator(ComplementaryPwm modulator) {
  complementary_.push_back(std::move(modulator));
  return *this;
}

Circuit& Circuit::add_modulator(GateSchedule schedule) {
  schedules_.push_back(std::move(schedule));
  return *this;
}

int Circuit::find_element(const std::string& name) const {
  for (std::size_t k = 0; k < elements_.size(); ++k) {
    if (elements_[k].name == name) return static_cast<int>(k);
  }
  return -1;
}

double Circuit::first_modulator_period_s() const {
  if (!pwm_.empty() && pwm_.front().frequency_hz > 0) return 1.0 / pwm_.front().frequency_hz;
  if (!complementary_.empty() && complementary_.front().frequency_hz > 0)
    return 1.0 / complementary_.front().frequency_hz;
  return 0.0;
}

}  // namespace pulsewise
