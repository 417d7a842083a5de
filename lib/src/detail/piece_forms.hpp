// The linear and quadratic forms of one piece of a configuration and length h as functions of
// its start state z: the Taylor terms of exp(M h s) on unit vectors, the polynomial rows of a
// linear functional, and the integral of a product of two functionals. Both the replay of a
// repeating period (period_replay.cpp) and the operators of pieces met again
// (piece_operators.cpp) are built from them; neither is on the hot path.
#pragma once

#include <Eigen/Dense>
#include <vector>

#include "detail/engine.hpp"

namespace pulsewise::detail {

// T_k, k = 0..K: column i of T_k is term k of the series of exp(M h s) e_i, so that term k of
// exp(M h s) z is T_k z. The series and its stopping test are those of TaylorPiece. False when a
// series does not converge (h beyond the configuration's sub-step bound).
bool unit_terms(const PatternData& pd, double h, int n, std::vector<Eigen::MatrixXd>& terms);

// Row k: coefficient k of the polynomial c . z(s) as a linear form in the start state.
Eigen::MatrixXd polynomial_rows(const Eigen::RowVectorXd& c, const std::vector<Eigen::MatrixXd>& t);

// The symmetric W with integral over s in [0, 1] of a(s) b(s) = z^T W z, where a and b have the
// polynomial rows pa and pb: sum over k, l of pa_k^T pb_l / (k + l + 1).
Eigen::MatrixXd product_form(const Eigen::MatrixXd& pa, const Eigen::MatrixXd& pb);

// The integral over s in [0, 1] (the mean) of the polynomial with rows p, as a linear form.
Eigen::RowVectorXd mean_row(const Eigen::MatrixXd& p);

// A sparse row over z as a dense one of n entries.
Eigen::RowVectorXd dense(const SparseRow& row, int n);

// Value and slope (d/ds) at both ends of the piece from the polynomial rows p, into rows
// at .. at + 3 of ends (value at 0, value at 1, slope at 0, slope at 1).
void end_rows(const Eigen::MatrixXd& p, Eigen::MatrixXd& ends, Eigen::Index at);

}  // namespace pulsewise::detail
