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
  const int n = static_cast<int>(M.rows());
  const double* m = M.data();
  for (int k = 1; k <= kMaxOrder; ++k) {
    const double* prev = terms_.data() + (k - 1) * n;
    double* next = terms_.data() + k * n;
    const double scale = h / k;
    for (int i = 0; i < n; ++i) next[i] = 0.0;
    for (int j = 0; j < n; ++j) {
      const double pj = scale * prev[j];
      if (pj == 0.0) continue;
      const double* column = m + j * n;
      for (int i = 0; i < n; ++i) next[i] += column[i] * pj;
    }
    double term = 0.0;
    for (int i = 0; i < n; ++i) term = std::max(term, std::abs(next[i]));
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
  const int n = static_cast<int>(terms_.rows());
  double scale = s_end;
  for (int k = 1; k <= order_; ++k) {
    double* z = terms_.data() + k * n;
    for (int i = 0; i < n; ++i) z[i] *= scale;
    scale *= s_end;
  }
  h_ *= s_end;
}

void TaylorPiece::project(const Eigen::MatrixXd& rows, Eigen::MatrixXd& out) const {
  const int n = static_cast<int>(terms_.rows());
  const int r_count = static_cast<int>(rows.rows());
  for (int k = 0; k <= order_; ++k) {
    const double* z = terms_.data() + k * n;
    for (int r = 0; r < r_count; ++r) {
      double v = 0.0;
      for (int j = 0; j < n; ++j) v += rows(r, j) * z[j];
      out(r, k) = v;
    }
  }
}

void TaylorPiece::state_at(double s, Eigen::Ref<Eigen::VectorXd> z) const {
  z = terms_.col(order_);
  for (int k = order_ - 1; k >= 0; --k) z = z * s + terms_.col(k);
}

void TaylorPiece::end_state(Eigen::Ref<Eigen::VectorXd> z) const {
  const int n = static_cast<int>(terms_.rows());
  for (int i = 0; i < n; ++i) {
    double v = 0.0;
    for (int k = order_; k >= 0; --k) v += terms_(i, k);
    z[i] = v;
  }
}

}  // namespace pulsewise::detail
