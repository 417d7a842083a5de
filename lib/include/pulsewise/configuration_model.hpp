// The linear model of one device configuration. While no device changes state the circuit is
// linear; for a device on/off pattern, modified nodal analysis (capacitors as voltage sources,
// inductors as current sources) gives
//     dx/dt = A x + B u + E n,    y = C x + D u + F n
// x: inductor currents then capacitor voltages (element order);
// u: every independent source value (element order) followed by the constant 1, which carries
//    diode forward drops;
// y: every signal of the circuit, see CircuitModel::signals();
// n: the currents of nonlinear current-type elements (constant-power loads), each a function of
//    its own terminal voltage; E and F have no columns in a linear circuit.
//
// Ideal open devices are handled exactly: a group of nodes that the open devices leave joined to
// the rest only through inductors and current sources gets its potential from the condition that
// the cutset current stays constant (its derivative is zero). See docs/method.md.
#pragma once

#include <Eigen/Dense>
#include <cstddef>
#include <cstdint>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "pulsewise/circuit.hpp"

namespace pulsewise {

// Bit k set: device k (the k-th switch or diode in element order) is on.
using DevicePattern = std::uint64_t;
inline constexpr std::size_t kMaxDevices = 64;

enum class SignalQuantity { kVoltage, kCurrent };

struct SignalInfo {
  std::string name;  // "<node>.v", "<element>.v" or "<element>.i"
  SignalQuantity quantity = SignalQuantity::kVoltage;
  int element = -1;  // element index, or -1 for a node voltage
  const char* unit() const { return quantity == SignalQuantity::kVoltage ? "V" : "A"; }
};

// A group of nodes that the open devices of a configuration leave floating.
struct FloatingGroup {
  std::vector<std::string> nodes;
  std::vector<int> cutset_inductors;        // element indices
  std::vector<int> cutset_current_sources;  // element indices
  std::vector<int> adjacent_open_devices;   // element indices
  // Net current into the group through its cutset: current_row_x * x + current_row_u * u.
  // Must be zero for the configuration to be consistent.
  Eigen::RowVectorXd current_row_x;
  Eigen::RowVectorXd current_row_u;
};

class ConfigurationModel {
 public:
  DevicePattern pattern = 0;
  bool valid = false;   // false: the configuration closes a loop of zero-resistance branches
  std::string problem;  // why it is not valid
  std::vector<int> loop_elements;  // element indices of that loop
  Eigen::MatrixXd A, B, C, D, E, F;
  std::vector<FloatingGroup> floating_groups;
};

// The fixed part of a circuit's model: which states, inputs, signals and devices exist, plus the
// cache of configuration models built on first use.
class CircuitModel {
 public:
  // Runs check_circuit() first; throws InputError for a bad circuit.
  explicit CircuitModel(const Circuit& circuit);

  const Circuit& circuit() const { return circuit_; }
  std::size_t state_count() const { return state_elements_.size(); }
  std::size_t input_count() const { return input_elements_.size() + 1; }
  // Element index of each state (inductor current or capacitor voltage).
  const std::vector<int>& state_elements() const { return state_elements_; }
  // Element index of each source input; the last input (the constant 1) has none.
  const std::vector<int>& input_elements() const { return input_elements_; }
  // Element index of each nonlinear current (constant-power load), in the order of n.
  const std::vector<int>& nonlinear_elements() const { return nonlinear_elements_; }
  // Element index of each device, in bit order of DevicePattern.
  const std::vector<int>& devices() const { return devices_; }
  const std::vector<SignalInfo>& signals() const { return signals_; }
  // Index into signals(), or -1.
  int find_signal(const std::string& name) const;
  // Signal index of an element's current or voltage.
  int element_current_signal(int element) const { return element_signal_[element * 2 + 1]; }
  int element_voltage_signal(int element) const { return element_signal_[element * 2]; }
  // Input vector u at time t (sources then 1).
  void inputs_at(double t, Eigen::Ref<Eigen::VectorXd> u) const;
  void input_slopes_at(double t, Eigen::Ref<Eigen::VectorXd> du) const;
  // Initial state from the elements' initial conditions.
  Eigen::VectorXd initial_state() const;

  // The model of one configuration, built on first use and cached when caching is on.
  const ConfigurationModel& configuration(DevicePattern pattern);
  // Build without touching the cache.
  ConfigurationModel build(DevicePattern pattern) const;
  void set_caching(bool on) { caching_ = on; }
  std::size_t configurations_built() const { return built_; }
  std::size_t cache_hits() const { return hits_; }

  std::string describe(DevicePattern pattern) const;  // "S1 on, D1 off"

 private:
  Circuit circuit_;
  std::vector<std::string> node_names_;  // non-ground nodes
  std::vector<int> node_a_, node_b_;     // per element: node index, -1 for ground
  std::vector<int> state_elements_, input_elements_, devices_, nonlinear_elements_;
  std::vector<int> state_of_element_, input_of_element_, device_of_element_, nonlinear_of_element_;
  std::vector<SignalInfo> signals_;
  std::vector<int> element_signal_;
  std::map<std::string, int> signal_index_;
  std::map<DevicePattern, std::unique_ptr<ConfigurationModel>> cache_;
  std::unique_ptr<ConfigurationModel> uncached_;
  bool caching_ = true;
  std::size_t built_ = 0, hits_ = 0;
};

}  // namespace pulsewise
