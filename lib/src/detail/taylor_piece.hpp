// One piece of the exact solution z(t0 + s h) = exp(M s h) z0, s in [0, 1], for the augmented
// linear system dz/dt = M z (states, inputs and input slopes; see simulation.cpp).
//
// Method: the action of the matrix exponential on a vector by the truncated Taylor series,
// evaluated on sub-steps short enough that ||M h||_1 <= theta (the sub-stepping of
// A. H. Al-Mohy and N. J. Higham, "Computing the action of the matrix exponential, with an
// application to exponential integrators", SIAM J. Sci. Comput. 33(2), 488-511, 2011). The
// series is summed until two consecutive terms fall below the unit roundoff relative to the
// running sum (their stopping test), which for theta = 0.5 takes about 14 terms. Keeping the
// terms z_k = (M h)^k z0 / k! turns every linear functional of the state into a polynomial in s,
// so events, integrals and extrema are found exactly on that polynomial.
//
// Only the leading `dynamic_rows` entries of z can change within a piece: the rows of M past
// them are zero (constant inputs), so every term after z_0 vanishes there. The series and the
// moments run over that block alone, which for a converter with constant sources is the state
// vector x: the cost per term is one (n_x x n_x) matrix-vector product, not (n_z x n_z).
#pragma once

#include <Eigen/Dense>
#include <array>
#include <vector>

namespace pulsewise::detail {

// Rows of linear functionals of z (signals, device conditions), stored row by row so that each
// row is contiguous.
using RowMatrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

// Entries (i, j), i <= j, of the moving block of a Gram matrix that a caller reads.
using GramPairs = std::vector<std::array<int, 2>>;

class TaylorPiece {
 public:
  static constexpr int kMaxOrder = 40;

  explicit TaylorPiece(int dimension = 0) { resize(dimension); }
  void resize(int dimension);

  // Expand exp(M h s) z0, where rows dynamic_rows.. of M are zero. Returns false when the series
  // did not converge within kMaxOrder terms (||M h|| far too large: a caller bug, the sub-step
  // bound prevents it).
  bool expand(const Eigen::MatrixXd& M, const Eigen::VectorXd& z0, double h, int dynamic_rows);
  // Restrict the piece to [0, s_end] and renormalise it to [0, 1].
  void truncate(double s_end);

  int order() const { return order_; }
  // sum over k >= 1 of max_i |z_k[i]|: for any row r over z, |r . (z(s) - z_0)| on [0, 1] is at
  // most (sum over the dynamic block of |r_i|) times this, which proves a device condition
  // far from zero keeps its sign over the piece without its polynomial.
  double variation_bound() const { return variation_bound_; }
  int dynamic_rows() const { return dynamic_; }
  double duration_s() const { return h_; }
  // Column k holds z_k; the state at s is sum_k z_k s^k. Entries past dynamic_rows() are zero
  // for k >= 1.
  const Eigen::MatrixXd& terms() const { return terms_; }
  // out(r, k) = rows.row(r) . z_k for k = 0..order(): the polynomial coefficients of linear
  // functionals of the state. Plain loops: the matrices are tiny and a general product's
  // packing overhead dominates at these sizes.
  void project(const RowMatrix& rows, Eigen::MatrixXd& out) const;
  // Coefficients of one functional: a[k] = row . z_k, k = 0..order().
  void project_row(const double* row, double* a) const;
  // Exact moments of the piece over s in [0, 1]: mean = sum z_k / (k+1) (the integral of z),
  // end = z(1), end_slope = dz/ds at s = 1 = sum k z_k, and when gram is non-null the Gram
  // matrix G = integral of z z^T = sum_{k,l} z_k z_l^T / (k+l+1) (n x n, column-major), from
  // which the integral of any product of two linear functionals a.z and b.z is a^T G b.
  // The second form computes only the listed entries of the moving block (rows and columns below
  // dynamic_rows()) are computed and the rest of that block is left as it was; the entries with
  // a static row or column are always written.
  void moments(double* mean, double* end, double* end_slope, double* gram) const;
  void moments(double* mean, double* end, double* end_slope, double* gram,
               const GramPairs& pairs) const;

 private:
  Eigen::MatrixXd terms_;
  mutable Eigen::VectorXd scratch_;  // the generic kernels' accumulators
  int order_ = 0;
  int dynamic_ = 0;
  // Keeps the terms past the dynamic block zero without clearing them per term: rows
  // zero_from_.. are zero in columns 1..kMaxOrder, and no expansion has written past column
  // written_order_ (so a smaller block only clears that much).
  int zero_from_ = 0, written_order_ = 0;
  double h_ = 0.0;
  double variation_bound_ = 0.0;
};

}  // namespace pulsewise::detail
