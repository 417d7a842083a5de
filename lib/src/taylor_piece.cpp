#include "detail/taylor_piece.hpp"

#include <cmath>
#include <limits>

namespace pulsewise::detail {

bool TaylorPiece::expand(const Eigen::MatrixXd& M, const Eigen::VectorXd& z0, double h) {
  constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;
  h_ = h;
  terms_.col(0) = z0;
  double sum_norm = z0.lpNorm<Eigen::Infinity>();
  double previous = sum_norm;
  for (int k = 1; k <= kMaxOrder; ++k) {
    terms_.col(k).noalias() = (h / k) * (M * terms_.col(k - 1));
    const double term = terms_.col(k).lpNorm<Eigen::Infinity>();
    sum_norm = std::max(sum_norm, term);
    if (term + previous <= kUnitRoundoff * sum_norm) {
      order_ = k;
      return true;
    }
    previous = term;
  }
  order_ = kMaxOrder;
  return false;
}

void TaylorPiece::truncate(double s_end) {
  double scale = 1.0;
  for (int k = 0; k <= order_; ++k) {
    terms_.col(k) *= scale;
    scale *= s_end;
  }
  h_ *= s_end;
}

void TaylorPiece::state_at(double s, Eigen::Ref<Eigen::VectorXd> z) const {
  z = terms_.col(order_);
  for (int k = order_ - 1; k >= 0; --k) z = z * s + terms_.col(k);
}

void TaylorPiece::end_state(Eigen::Ref<Eigen::VectorXd> z) const {
  z = terms_.leftCols(order_ + 1).rowwise().sum();
}

}  // namespace pulsewise::detail
