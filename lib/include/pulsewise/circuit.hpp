// The circuit: named nodes, linear elements, switching devices and the gate drivers that control
// the switches. Built either from C++ with the add_* calls below or from a circuit file (see
// circuit_file.hpp). Ground is the node named "0" or "gnd".
//
// Sign conventions (SI units throughout):
//  * Passive elements and devices: voltage v = v(node_a) - v(node_b), current flows from node_a to
//    node_b through the element. For a diode node_a is the anode.
//  * Sources: voltage v = v(plus) - v(minus); the current is the one delivered out of the plus
//    terminal into the circuit, so a source that delivers power has v * i > 0.
#pragma once

#include <cstddef>
#include <limits>
#include <string>
#include <vector>

#include "pulsewise/error.hpp"
#include "pulsewise/modulator.hpp"
#include "pulsewise/waveform.hpp"

namespace pulsewise {

inline constexpr double kOpen = std::numeric_limits<double>::infinity();

enum class ElementKind {
  kResistor,
  kInductor,
  kCapacitor,
  kVoltageSource,
  kCurrentSource,
  kSwitch,
  kDiode,
  kConstantPowerLoad,  // nonlinear: i = P / v above its cut-in voltage (simulated on the ODE path)
};

const char* to_string(ElementKind kind);

// A saturating inductor (saturation_current_a > 0) follows the flux-linkage curve
//   psi(i) = L_sat i + (L_0 - L_sat) I_sat tanh(i / I_sat),
// so its differential inductance L_d(i) = L_sat + (L_0 - L_sat) / cosh^2(i / I_sat) falls smoothly
// from the unsaturated value L_0 (the element's inductance) at small current to L_sat well above
// I_sat. A smooth single-knee fit of a ferrite or powder-core B-H curve (common practice, no
// source); see docs/method.md. Circuits with one are simulated on the ODE path.
struct InductorOptions {
  double winding_resistance_ohm = 0.0;  // series DCR, ohm, >= 0
  double initial_current_a = 0.0;       // current at t = 0, A (node_a -> node_b)
  double saturation_current_a = 0.0;    // I_sat, A; 0 (the default) means a linear inductor
  double saturated_inductance_h = 0.0;  // L_sat, H, 0 < L_sat < L_0 when saturating
};

// A constant-power load (a downstream converter): draws i = P / v from node_a to node_b when
// v >= cut-in voltage, and behaves as the resistor v_cut^2 / P below it (continuous at v_cut, and
// finite at start-up from zero voltage). Circuits with one are simulated on the ODE path.
struct ConstantPowerOptions {
  double cut_in_voltage_v = 1.0;  // V, > 0
};

struct CapacitorOptions {
  double series_resistance_ohm = 0.0;  // ESR, ohm, >= 0
  double initial_voltage_v = 0.0;      // voltage at t = 0, V
};

struct SwitchOptions {
  double on_resistance_ohm = 0.0;     // ohm, >= 0 (0 only where it closes no voltage loop)
  double off_resistance_ohm = kOpen;  // ohm, > 0; kOpen (the default) is an exact open circuit
};

struct DiodeOptions {
  double on_resistance_ohm = 0.0;     // ohm, >= 0
  double forward_voltage_v = 0.0;     // forward drop, V, >= 0
  double off_resistance_ohm = kOpen;  // ohm, > 0; kOpen (the default) is an exact open circuit
};

// One element. Fields that do not apply to the kind stay at their defaults.
struct Element {
  ElementKind kind = ElementKind::kResistor;
  std::string name;
  std::string node_a;                  // positive terminal, anode, plus
  std::string node_b;                  // negative terminal, cathode, minus
  double value = 0.0;                  // resistance ohm, inductance H, capacitance F (R, L, C only)
  double series_resistance_ohm = 0.0;  // inductor DCR or capacitor ESR
  double initial_value = 0.0;          // inductor current A or capacitor voltage V at t = 0
  Waveform waveform;                   // sources: V or A
  double on_resistance_ohm = 0.0;      // devices
  double off_resistance_ohm = kOpen;   // devices
  double forward_voltage_v = 0.0;      // diodes
  std::string gate;                    // switches: the gate signal that drives them
  double saturation_current_a = 0.0;   // saturating inductor: I_sat (0: linear)
  double saturated_inductance_h = 0.0;  // saturating inductor: L_sat
  double power_w = 0.0;                 // constant-power load: P, W
  double cut_in_voltage_v = 0.0;        // constant-power load: below it the load is resistive
  SourceLocation where;                 // where it was defined, when it came from a file

  bool is_device() const { return kind == ElementKind::kSwitch || kind == ElementKind::kDiode; }
  bool is_saturating() const { return kind == ElementKind::kInductor && saturation_current_a > 0; }
  bool is_nonlinear() const { return is_saturating() || kind == ElementKind::kConstantPowerLoad; }
};

class Circuit {
 public:
  Circuit() = default;
  explicit Circuit(std::string name) : name_(std::move(name)) {}

  Circuit& add_resistor(std::string name, std::string node_a, std::string node_b,
                        double resistance_ohm, SourceLocation where = {});
  Circuit& add_inductor(std::string name, std::string node_a, std::string node_b,
                        double inductance_h, InductorOptions options = {},
                        SourceLocation where = {});
  Circuit& add_capacitor(std::string name, std::string node_a, std::string node_b,
                         double capacitance_f, CapacitorOptions options = {},
                         SourceLocation where = {});
  Circuit& add_voltage_source(std::string name, std::string plus, std::string minus,
                              Waveform voltage_v, SourceLocation where = {});
  Circuit& add_current_source(std::string name, std::string plus, std::string minus,
                              Waveform current_a, SourceLocation where = {});
  Circuit& add_switch(std::string name, std::string node_a, std::string node_b, std::string gate,
                      SwitchOptions options = {}, SourceLocation where = {});
  Circuit& add_diode(std::string name, std::string anode, std::string cathode,
                     DiodeOptions options = {}, SourceLocation where = {});
  Circuit& add_constant_power_load(std::string name, std::string node_a, std::string node_b,
                                   double power_w, ConstantPowerOptions options = {},
                                   SourceLocation where = {});

  Circuit& add_modulator(PwmModulator modulator);
  Circuit& add_modulator(ComplementaryPwm modulator);
  Circuit& add_modulator(GateSchedule schedule);

  const std::string& name() const { return name_; }
  const std::vector<Element>& elements() const { return elements_; }
  const std::vector<PwmModulator>& pwm_modulators() const { return pwm_; }
  const std::vector<ComplementaryPwm>& complementary_modulators() const { return complementary_; }
  const std::vector<GateSchedule>& gate_schedules() const { return schedules_; }

  // Index of the element with this name, or -1.
  int find_element(const std::string& name) const;
  // True when some element is nonlinear between events (the run uses the ODE path).
  bool has_nonlinear_elements() const;
  // The switching period of the first modulator (PWM or complementary), or 0 when there is none.
  double first_modulator_period_s() const;

  static bool is_ground(const std::string& node) { return node == "0" || node == "gnd"; }

 private:
  std::string name_;
  std::vector<Element> elements_;
  std::vector<PwmModulator> pwm_;
  std::vector<ComplementaryPwm> complementary_;
  std::vector<GateSchedule> schedules_;
};

}  // namespace pulsewise
