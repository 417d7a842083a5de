// Operators of a switching period that repeats exactly. With constant sources and gates that
// repeat with the run period, a period without state events (CCM in steady state, for example)
// runs the same sequence of pieces, each of the same configuration and length, every time. Each
// piece is then the linear map z -> exp(M h) z of its start state, and so is the whole period:
// every signal integral of the period is a linear form and every RMS and element energy a
// quadratic form in the state w at the start of the period. Built once from the Taylor terms of
// exp(M h) applied to the unit vectors (the same series as TaylorPiece), these forms replace
// the per-piece series and moments; what stays per piece is one transition product and the end
// values and slopes that the extrema need.
//
// The replay is only valid while the period really repeats: Simulation checks, piece by piece,
// that no device condition can cross zero (a norm bound on its polynomial, else the exact event
// search on the expanded piece) and that every gate edge leads to the recorded configuration,
// and falls back to the piece engine for the period when either check fails.
#pragma once

#include <Eigen/Dense>
#include <vector>

#include "detail/engine.hpp"

namespace pulsewise::detail {

// One step of a recorded period: a piece of duration h in one configuration (data non-null),
// or the scheduled events at offset tau from the period start (data null, value = tau).
struct PeriodStep {
  const PatternData* data = nullptr;
  DevicePattern pattern = 0;  // of the piece, or the switches just after a schedule step
  double value = 0.0;         // h of a piece or tau of a schedule step, s
  bool operator==(const PeriodStep&) const = default;
};

// What the forms are built for: the recorded signals (rows of PatternData::recorded), the
// inductor states whose peaks are tracked outside the recorded signals (unit rows), and the
// element powers (PatternData::power_forms) when energies are accounted.
struct ReplayFunctionals {
  int signals = 0;
  std::vector<int> extra_states;
  bool energies = false;
};

// y = a x for the small column-major matrices of the replay (plain loops: at these sizes the
// general product's set-up costs more than the product).
inline void apply(const Eigen::MatrixXd& a, const double* __restrict x, double* __restrict y) {
  const Eigen::Index rows = a.rows(), cols = a.cols();
  const double* __restrict column = a.data();
  for (Eigen::Index i = 0; i < rows; ++i) y[i] = 0.0;
  for (Eigen::Index j = 0; j < cols; ++j, column += rows) {
    const double xj = x[j];
    for (Eigen::Index i = 0; i < rows; ++i) y[i] += column[i] * xj;
  }
}

class PeriodReplay {
 public:
  // The per-piece data of the replay; z_start is the state at the start of the piece.
  struct Piece {
    int order = 0;
    int dynamic_rows = 0;
    double h = 0.0;
    int conditions = 0;  // device conditions (rows of PatternData::events)
    int signals = 0;     // recorded signals
    // Rows applied to z_start, in three blocks: the device conditions g(0); four rows per
    // recorded signal (its value at s = 0 and s = 1, its slope d/ds at s = 0 and s = 1); the
    // moving rows of exp(M h), which give the end state.
    Eigen::MatrixXd on_state;
    // Rows applied to |z_start|: per device condition, then per tracked functional f (the
    // signals, then the extra states), a row with |f(s) - f(0)| <= row . |z_start| on the
    // piece (the sum over k >= 1 of |polynomial row k|).
    Eigen::MatrixXd on_magnitude;
    // Per tracked functional: the polynomial rows, coefficient k of f(z(s)) = row k . z_start.
    std::vector<Eigen::MatrixXd> polynomial;
    Eigen::Index ends_row() const { return conditions; }
    Eigen::Index transition_row() const { return conditions + 4 * signals; }
  };

  bool built() const { return !steps_.empty(); }
  const std::vector<PeriodStep>& steps() const { return steps_; }
  void clear();
  // Builds the operators of `steps` (which must start with a piece); n is the size of z.
  // Returns false (and stays empty) when a series does not converge.
  bool build(std::vector<PeriodStep> steps, int n, const ReplayFunctionals& functionals);

  // Piece data of step index `step` (a piece step).
  const Piece& piece(int step) const { return pieces_[piece_of_step_[step]]; }

  // The period's integrals of the recorded signals, squared signals and element energies
  // (J), from the state w at the start of the period.
  void period_integrals(const Eigen::VectorXd& w, double* integral, double* square_integral,
                        double* element_energy) const;

 private:
  static Piece piece_rows(const PatternData& pd, double h, const ReplayFunctionals& f,
                          const std::vector<Eigen::MatrixXd>& terms,
                          const Eigen::MatrixXd& transition);
  void add_forms(const PatternData& pd, const Piece& pc, const std::vector<Eigen::MatrixXd>& terms,
                 const Eigen::MatrixXd& to_piece);

  std::vector<PeriodStep> steps_;
  std::vector<int> piece_of_step_;
  std::vector<Piece> pieces_;
  int signals_ = 0, energies_ = 0;
  Eigen::MatrixXd linear_;     // signals x n: integral of each signal
  Eigen::MatrixXd quadratic_;  // (signals + energies) n x n, stacked symmetric forms
  mutable Eigen::VectorXd product_;
};

}  // namespace pulsewise::detail
