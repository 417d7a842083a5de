// The whole work of one piece for a configuration with a small moving block, in one call:
// the series of exp(M h s) z0, the search for the earliest device event, the truncation at it,
// the moments, and the per-signal integrals, extremes, energies and inductor peaks they give.
//
// It does exactly what TaylorPiece and the piece loop of simulation.cpp do, in the same order of
// operations (so results are identical to the bit), but with the moving block's size fixed at
// compile time and the piece on the stack: the compiler keeps the terms and accumulators in
// registers and unrolls the tiny products. Measured in docs/performance.md (seventh round): on
// the DCM boost of the benchmarks, 10 665 instructions per computed period against 12 440 with
// the general code, and 1.06 to 1.21x in time.
//
// The general duties of an event (the consistency search, the event log, the configuration
// intervals, the observers) stay with the caller.
#pragma once

#include <span>
#include <utility>
#include <vector>

#include "detail/engine.hpp"

namespace pulsewise::detail {

// The kernel takes configurations with at most this many moving rows and entries of z.
inline constexpr int kKernelMaxMoving = 4;
inline constexpr int kKernelMaxSize = 8;

// What the kernel needs of a run, fixed for the run. The spans view the run's own tables, set
// up once before it starts.
struct KernelLayout {
  int size = 0;     // entries of z
  int signals = 0;  // recorded signals
  // RMS from the Gram matrix (else from each signal's polynomial) and element energies.
  bool use_gram = false;
  bool energy_accounting = false;
  std::span<const int> diode_bits;         // device bit of each event row
  std::span<const int> inductor_states;    // state index of each inductor
  std::span<const int> inductor_recorded;  // its recorded signal, or -1
  std::vector<EnergyRole> energy_roles;    // per energy element
};

// One piece to compute.
struct PieceTask {
  const PatternData* data = nullptr;
  DevicePattern pattern = 0;
  double* z = nullptr;       // the start state; the end state on return
  double h = 0.0;            // length asked for, s
  double s_tolerance = 0.0;  // event location tolerance, as a fraction of h
  // Noise bands of the device conditions: on diodes carry currents, off diodes voltages.
  double current_noise = 0.0, voltage_noise = 0.0;
  // When not null: the recorded signals' polynomial coefficients, column k the power s^k,
  // column-major with `coefficient_rows` rows (for observers).
  double* coefficients = nullptr;
  int coefficient_rows = 0;
};

// Where a piece's results go.
struct PieceSinks {
  CycleAccumulator* cycle = nullptr;
  double* piece_min = nullptr;  // per recorded signal: its extremes on this piece
  double* piece_max = nullptr;
  double* inductor_peak = nullptr;  // per inductor: the largest |i| so far
};

struct PieceOutcome {
  bool converged = true;  // false: the series did not converge (a sub-step bound bug)
  int event = -1;         // event row that ends the piece early, or -1
  double h = 0.0;         // the piece's length, s
  int order = 0;          // its polynomial degree
};

// True when the kernel takes a configuration with `moving` moving rows in a z of `size` entries.
inline bool kernel_takes(int moving, int size) {
  return moving >= 1 && moving <= kKernelMaxMoving && size <= kKernelMaxSize;
}

PieceOutcome run_piece_kernel(const KernelLayout& layout, const PieceTask& task,
                              const PieceSinks& sinks);

}  // namespace pulsewise::detail
