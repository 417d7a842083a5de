// Internal state of a run: the augmented per-configuration data, the event engine and the cycle
// accumulators. Only simulation.cpp uses it.
#pragma once

#include <Eigen/Dense>
#include <array>
#include <chrono>
#include <map>
#include <memory>
#include <vector>

#include "detail/gate_bank.hpp"
#include "detail/taylor_piece.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise::detail {

// The non-zero entries of a row over z. A signal or an element power touches a few entries of z,
// so its product with the Gram matrix costs a few terms instead of n^2. Index and value sit side
// by side, one array per row.
struct SparseRow {
  struct Entry {
    int index;
    double value;
  };
  std::vector<Entry> entries;
  explicit SparseRow(const Eigen::Ref<const Eigen::RowVectorXd>& row = Eigen::RowVectorXd()) {
    for (Eigen::Index j = 0; j < row.size(); ++j)
      if (row[j] != 0.0) entries.push_back({static_cast<int>(j), row[j]});
  }
};

// row . v for several vectors v in one pass over the row (a signal's value and slope at both ends
// and its mean on a piece).
template <std::size_t N>
std::array<double, N> dots(const SparseRow& row, const std::array<const double*, N>& vectors) {
  std::array<double, N> out{};
  for (const SparseRow::Entry& e : row.entries)
    for (std::size_t m = 0; m < N; ++m) out[m] += e.value * vectors[m][e.index];
  return out;
}

// a^T G b for the symmetric n x n matrix G (column-major).
inline double bilinear(const SparseRow& a, const double* g, int n, const SparseRow& b) {
  double sum = 0.0;
  for (const SparseRow::Entry& q : b.entries) {
    const double* column = g + q.index * n;
    double inner = 0.0;
    for (const SparseRow::Entry& p : a.entries) inner += p.value * column[p.index];
    sum += inner * q.value;
  }
  return sum;
}

// The power of one element as the bilinear form weight * (a.z) (b.z): (v, i, 1) for sources and
// v-i elements, (i, i, R) for a series resistance.
struct PowerForm {
  SparseRow a, b;
  double weight = 1.0;
};

// What the event engine needs of one configuration, over the augmented state
// z = [x; u; du/dt of the ramping inputs].
struct PatternData {
  const ConfigurationModel* model = nullptr;
  Eigen::MatrixXd M;         // dz/dt = M z
  int dynamic_rows = 0;      // rows of z that move: M is zero below them (see TaylorPiece)
  bool listed_gram = false;  // the Gram block is summed over gram_pairs only
  RowMatrix recorded;        // rows: recorded signals
  RowMatrix events;          // rows: device conditions g >= 0 (one per diode)
  RowMatrix event_rates;     // rows: their time derivatives dg/dt = (events M) z
  std::vector<double> event_dynamic_l1;  // per event row: sum of |entries| over the moving block
  RowMatrix energy;  // rows: (v, i) of each element taking part in the energy balance
  std::vector<SparseRow> recorded_sparse;  // the rows of `recorded`
  std::vector<PowerForm> power_forms;      // per energy element
  // Entries of the moving block of the Gram matrix that recorded and power_forms read; used
  // (listed_gram) where summing them alone is cheaper than the whole block.
  GramPairs gram_pairs;
  double max_step_s = 0.0;  // sub-step bound from ||M||_1
  // Per floating group of the configuration: the device bit of the diode that a net current into
  // the group (entry 0) or out of it (entry 1) forward-biases, -1 when there is none.
  std::vector<std::array<int, 2>> freewheeling;
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
