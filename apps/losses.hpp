// Efficiency and loss split of the last period, computed by the driver from the exact per-period
// statistics of the recorded signals: an element's average loss follows from the RMS (and, for a
// diode's forward drop, the average) of its current, or of its voltage for a resistor:
//   resistor R: I_rms^2 R = V_rms^2 / R;  inductor DCR, capacitor ESR, device on-resistance:
//   I_rms^2 R;  diode drop: V_f I_avg.
// Exact for devices with an open off-state (no current while off). Elements whose current is not
// recorded are listed as unattributed; the engine's total dissipation closes the balance.
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
  bool load_known = false;    // a load resistor across the output node was found
  std::vector<std::string> load_elements;
  double load_w = 0.0;                    // into the load resistors, W
  double efficiency = -1.0;               // load_w / input_w; -1 when not known
  std::vector<ElementLoss> losses;        // non-load elements with a computable, non-zero loss
  double unattributed_w = 0.0;            // dissipated - load - sum(losses), W
  std::vector<std::string> unattributed;  // lossy elements whose current is not recorded
};

// output_signal: the run's output, e.g. "out.v"; its node's resistors to ground are the load.
PowerBalance power_balance(const Circuit& circuit, const RunSummary& summary, double period_s,
                           const std::string& output_signal);

}  // namespace pulsewise::app
