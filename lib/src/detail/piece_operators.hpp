// The operators of one piece of a given configuration and length h, built once and applied to
// any start state z0. The piece is z(s) = exp(M h s) z0, so everything the piece kernel
// computes from it is a linear function of z0 (the end state, every signal's mean, its values
// and slopes at both ends, the coefficients of every polynomial) or a quadratic one (every
// square integral and element energy). A piece met again in the same configuration and length,
// such as the on-time of a DCM period from one gate edge to the next, then costs a few short dot
// products instead of its series, its moments and its Gram block.
//
// The operators come from the series of exp(M h s) on unit vectors (detail/piece_forms.hpp,
// shared with the replay of repeating periods), summed with the stopping test of TaylorPiece
// (Al-Mohy and Higham, SIAM J. Sci. Comput. 33(2), 2011), so they are as accurate as a piece's
// own series: results agree with it to rounding, not to the bit. The integrals of products are
// the integrals of products of polynomials on [0, 1], sum_{k,l} a_k b_l / (k + l + 1).
//
// A device event inside the piece ends it early, at a time that depends on z0; operators cannot
// give that. apply() first proves from the device conditions' own polynomials that none of them
// crosses zero inside the piece (the same searches as the series path), and hands the piece back
// untouched when one may: the series then computes it and finds the event.
#pragma once

#include <vector>

#include "detail/piece_kernel.hpp"

namespace pulsewise::detail {

class PieceOperators {
 public:
  // Builds the operators of configuration `data` over length h for the run's layout (whose size
  // the kernel takes: kernel_takes()), folded with the static entries of the start state z.
  // False when the series of exp(M h) does not converge within TaylorPiece::kMaxOrder terms
  // (h beyond the sub-step bound).
  bool build(const PatternData& data, double h, const double* z, const KernelLayout& layout);
  // The piece of `task` (its data and h must be those of build()) into the sinks, and its end
  // state into task.z. False, with nothing written, when a device condition may cross zero inside
  // the piece or the static entries of task.z are not those of build(). Observers' coefficients
  // (task.coefficients) are not produced.
  bool apply(const KernelLayout& layout, const PieceTask& task, const PieceSinks& sinks) const;
  // True when the static entries of z (past the moving block) are those the operators were
  // built with; apply() hands back a piece that does not match.
  bool matches(const double* z) const;
  // Degree of the operators' polynomials.
  int order() const { return order_; }

 private:
  // Appends the folded form (see below) of a linear form r . z, of the quadratic form
  // weight * z^T w z, of every row of polynomial rows p, and of a functional's value and slope
  // at s = 0 and s = 1 and h_mean_weight times its mean.
  void fold_linear(const Eigen::RowVectorXd& r, std::vector<double>& out) const;
  void fold_quadratic(const Eigen::MatrixXd& w, double weight, std::vector<double>& out) const;
  void fold_polynomial(const Eigen::MatrixXd& p, std::vector<double>& out) const;
  void add_value_forms(const Eigen::MatrixXd& p, double h_mean_weight);
  void build_forms(const PatternData& data, double h, const KernelLayout& layout,
                   const std::vector<Eigen::MatrixXd>& terms);
  template <int D>
  bool apply_fixed(const KernelLayout& layout, const PieceTask& task,
                   const PieceSinks& sinks) const;

  // The entries of z past the moving block stay constant over a piece, and over a run with
  // constant sources. The operators are folded with their values at build(): a linear form over
  // z becomes (moving_ coefficients, constant), a quadratic one (coefficients of the products
  // x_i x_j, i <= j, of the moving entries, then moving_ linear ones, then a constant). apply()
  // hands back a piece whose static entries differ from them.
  int n_ = 0, moving_ = 0, order_ = 0;
  std::vector<double> static_;  // z past the moving block at build()
  std::vector<double> end_;     // per moving entry: the linear form of its end value
  // Per recorded signal, then per inductor that is not recorded: kValueForms linear forms.
  std::vector<double> value_forms_;
  std::vector<double> squares_;   // per signal: h times the integral of its square
  std::vector<double> energies_;  // per energy element: its energy on the piece
  // Per signal, per extra inductor, per event row: the linear form of each coefficient, k =
  // 0..order_.
  std::vector<double> signal_polys_, inductor_polys_, event_polys_;
  // Per event row: sum over k >= 1 of |r P_k|, entrywise over the moving block, and the same
  // bound's constant part (the static entries' contribution).
  std::vector<double> event_bounds_;
};

}  // namespace pulsewise::detail
