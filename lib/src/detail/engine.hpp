// Internal state of a run: the augmented per-configuration data, the event engine and the cycle
// accumulators. Only simulation.cpp uses it.
#pragma once

#include <Eigen/Dense>
#include <chrono>
#include <map>
#include <memory>
#include <vector>

#include "detail/gate_bank.hpp"
#include "detail/taylor_piece.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise::detail {

// What the event engine needs of one configuration, over the augmented state
// z = [x; u; du/dt of the ramping inputs].
struct PatternData {
  const ConfigurationModel* model = nullptr;
  Eigen::MatrixXd M;         // dz/dt = M z
  Eigen::MatrixXd recorded;  // rows: recorded signals
  Eigen::MatrixXd events;    // rows: device conditions g >= 0 (one per diode)
  Eigen::MatrixXd energy;    // rows: (v, i) of each element taking part in the energy balance
  // Power of each energy element as a quadratic form of z: p = z^T Q z (symmetric).
  std::vector<Eigen::MatrixXd> power_forms;
  double max_step_s = 0.0;  // sub-step bound from ||M||_1
  // ODE path: the nonlinear currents n enter as dz/dt += E n, y += F n, g += events_n n.
  Eigen::MatrixXd E, recorded_n, events_n, energy_n;
  Eigen::MatrixXd load_voltage_z, load_voltage_n;  // load voltages = Vz z + Vn n
};

enum class EnergyRole { kSource, kDissipativeVi, kSeriesResistance };
struct EnergyTerm {
  EnergyRole role;
  double resistance_ohm = 0.0;  // kSeriesResistance
};

// Per-cycle accumulators of exact integrals and extrema.
struct CycleAccumulator {
  std::vector<double> integral, square_integral, min, max;
  std::vector<ConfigurationInterval> intervals;
  double energy_in = 0, dissipated = 0, stored_start = 0;
  std::vector<double> element_energy;  // per energy element
  double idle_time = 0;
  bool natural_turn_off = false;
  bool forced_off_near_zero = false;  // a diode forced off while carrying almost no current
  long events = 0;
  void reset(std::size_t signals, std::size_t energy_elements);
};

}  // namespace pulsewise::detail
