// Efficiency and loss split of the last period, from the engine's exact per-element energy
// integrals (CycleMetrics::element_energy): the load is every resistor or constant-power load
// between the run's output node and ground; each other element's loss is its dissipated energy
// over the period.
#pragma once

#include <string>
#include <vector>

#include "pulsewise/circuit.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise::app {

struct ElementLoss {
  std::string element;
  double loss_w = 0.0;  // average over the last period, W
};

struct PowerBalance {
  double input_w = 0.0;       // from the sources, W (energy_in / T)
  double dissipated_w = 0.0;  // total dissipation reported by the engine, W
  bool load_known = false;    // a load across the output node was found and accounted
  std::vector<std::string> load_elements;
  double load_w = 0.0;              // into the load, W
  double efficiency = -1.0;         // load_w / input_w; -1 when not known
  std::vector<ElementLoss> losses;  // non-load elements with a non-zero loss, element order
  double unattributed_w = 0.0;      // dissipated - load - sum(losses), W: round-off only
};

// output_signal: the run's output, e.g. "out.v"; its node's loads to ground are the load.
PowerBalance power_balance(const Circuit& circuit, const RunSummary& summary, double period_s,
                           const std::string& output_signal);

}  // namespace pulsewise::app
