#include "detail/taylor_piece.hpp"

#include "detail/polynomial.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <type_traits>

namespace pulsewise::detail {

namespace {

constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;

// The Taylor recursion z_k = (h / k) M z_{k-1} with the stopping test of Al-Mohy and Higham.
// N > 0 fixes the dimension at compile time (the common small circuits), N == 0 is generic;
// fixed sizes let the compiler unroll and vectorise the tiny matrix-vector products.
template <int N>
int expand_terms(const double* m, double* terms, int n_runtime, double h, int max_order) {
  const int n = N > 0 ? N : n_runtime;
  double sum_norm = 0.0;
  for (int i = 0; i < n; ++i) sum_norm = std::max(sum_norm, std::abs(terms[i]));
  double previous = sum_norm;
  for (int k = 1; k <= max_order; ++k) {
    const double* prev = terms + (k - 1) * n;
    double* next = terms + k * n;
    const double scale = h / k;
    double acc[N > 0 ? N : 1];
    double* out = N > 0 ? acc : next;
    for (int i = 0; i < n; ++i) out[i] = 0.0;
    for (int j = 0; j < n; ++j) {
      const double pj = scale * prev[j];
      const double* column = m + j * n;
      for (int i = 0; i < n; ++i) out[i] += column[i] * pj;
    }
    double term = 0.0;
    for (int i = 0; i < n; ++i) {
      next[i] = out[i];
      term = std::max(term, std::abs(out[i]));
    }
    sum_norm = std::max(sum_norm, term);
    if (term + previous <= kUnitRoundoff * sum_norm) return k;
    previous = term;
  }
  return -1;
}

// out(r, k) = sum_j rows(r, j) terms(j, k), column-major throughout.
template <int N>
void project_terms(const double* rows, int r_count, const double* terms, int n_runtime, int order,
                   double* out, int out_stride) {
  const int n = N > 0 ? N : n_runtime;
  for (int k = 0; k <= order; ++k) {
    const double* z = terms + k * n;
    double* o = out + k * out_stride;
    for (int r = 0; r < r_count; ++r) {
      double v = 0.0;
      for (int j = 0; j < n; ++j) v += rows[r + j * r_count] * z[j];
      o[r] = v;
    }
  }
}

template <class F>
decltype(auto) dispatch(int n, F&& f) {
  switch (n) {
    case 2: return f(std::integral_constant<int, 2>{});
    case 3: return f(std::integral_constant<int, 3>{});
    case 4: return f(std::integral_constant<int, 4>{});
    case 5: return f(std::integral_constant<int, 5>{});
    case 6: return f(std::integral_constant<int, 6>{});
    case 7: return f(std::integral_constant<int, 7>{});
    case 8: return f(std::integral_constant<int, 8>{});
    case 9: return f(std::integral_constant<int, 9>{});
    case 10: return f(std::integral_constant<int, 10>{});
    case 11: return f(std::integral_constant<int, 11>{});
    case 12: return f(std::integral_constant<int, 12>{});
    case 13: return f(std::integral_constant<int, 13>{});
    case 14: return f(std::integral_constant<int, 14>{});
    case 15: return f(std::integral_constant<int, 15>{});
    case 16: return f(std::integral_constant<int, 16>{});
    default: return f(std::integral_constant<int, 0>{});
  }
}

}  // namespace

bool TaylorPiece::expand(const Eigen::MatrixXd& M, const Eigen::VectorXd& z0, double h) {
  h_ = h;
  terms_.col(0) = z0;
  const int n = static_cast<int>(M.rows());
  const int order = dispatch(n, [&](auto size) {
    return expand_terms<decltype(size)::value>(M.data(), terms_.data(), n, h, kMaxOrder);
  });
  order_ = order < 0 ? kMaxOrder : order;
  return order >= 0;
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
  if (r_count == 0) return;
  dispatch(n, [&](auto size) {
    project_terms<decltype(size)::value>(rows.data(), r_count, terms_.data(), n, order_, out.data(),
                                         static_cast<int>(out.rows()));
  });
}

namespace {

template <int N>
void piece_moments(const double* terms, int n_runtime, int order, double* mean, double* end,
                   double* end_slope, double* gram) {
  const int n = N > 0 ? N : n_runtime;
  for (int i = 0; i < n; ++i) mean[i] = end[i] = end_slope[i] = 0.0;
  const double* reciprocal = poly::kReciprocal.value;
  for (int k = 0; k <= order; ++k) {
    const double* z = terms + k * n;
    const double w = reciprocal[k];
    for (int i = 0; i < n; ++i) {
      mean[i] += w * z[i];
      end[i] += z[i];
      end_slope[i] += k * z[i];
    }
  }
  if (!gram) return;
  for (int i = 0; i < n * n; ++i) gram[i] = 0.0;
  double y[N > 0 ? N : 64];
  for (int k = 0; k <= order; ++k) {
    // y = sum_l z_l / (k + l + 1), then G += z_k y^T.
    for (int i = 0; i < n; ++i) y[i] = 0.0;
    for (int l = 0; l <= order; ++l) {
      const double w = reciprocal[k + l];
      const double* z = terms + l * n;
      for (int i = 0; i < n; ++i) y[i] += w * z[i];
    }
    // G is symmetric: accumulate the upper triangle, mirror at the end.
    const double* zk = terms + k * n;
    for (int j = 0; j < n; ++j)
      for (int i = 0; i <= j; ++i) gram[i + j * n] += zk[i] * y[j];
  }
  for (int j = 0; j < n; ++j)
    for (int i = j + 1; i < n; ++i) gram[i + j * n] = gram[j + i * n];
}

}  // namespace

void TaylorPiece::moments(double* mean, double* end, double* end_slope, double* gram) const {
  const int n = static_cast<int>(terms_.rows());
  if (n > 64) {  // the generic stack buffer holds 64; larger circuits take the plain sums
    piece_moments<0>(terms_.data(), n, order_, mean, end, end_slope, nullptr);
    if (gram) {
      for (int i = 0; i < n * n; ++i) gram[i] = 0.0;
      for (int k = 0; k <= order_; ++k)
        for (int l = 0; l <= order_; ++l) {
          const double w = 1.0 / (k + l + 1);
          for (int j = 0; j < n; ++j)
            for (int i = 0; i < n; ++i) gram[i + j * n] += w * terms_(i, k) * terms_(j, l);
        }
    }
    return;
  }
  dispatch(n, [&](auto size) {
    piece_moments<decltype(size)::value>(terms_.data(), n, order_, mean, end, end_slope, gram);
  });
}

}  // namespace pulsewise::detail
