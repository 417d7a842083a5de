#include "detail/taylor_piece.hpp"

#include "detail/polynomial.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <type_traits>

namespace pulsewise::detail {

namespace {

constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;
constexpr int kMaxFixedBlock = 16;  // dynamic blocks up to this size get unrolled kernels

// Calls f with std::integral_constant<int, d> for 1 <= d <= kMaxFixedBlock, else with 0 (the
// generic kernels, whose size is a run-time value). Fixed sizes let the compiler unroll and
// vectorise the tiny products and keep the accumulators in registers.
template <class F>
decltype(auto) dispatch(int d, F&& f) {
  switch (d) {
    case 1: return f(std::integral_constant<int, 1>{});
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

// Accumulator storage: on the stack for fixed sizes, the caller's scratch otherwise.
template <int D>
struct Accumulator {
  double fixed[D > 0 ? D : 1];
  double* data;
  explicit Accumulator(double* scratch) : data(D > 0 ? fixed : scratch) {}
};

// The Taylor recursion z_k = (h / k) M z_{k-1} with the stopping test of Al-Mohy and Higham,
// over the dynamic block d of z: the first term takes every column of M (the inputs drive the
// states), later terms only the d x d block (z_{k-1} is zero past d). Rows past d are left
// alone: TaylorPiece keeps them zero.
template <int D>
int expand_terms(const double* m, int n, int d_runtime, double* terms, double h, int max_order,
                 double* scratch, double& variation) {
  const int d = D > 0 ? D : d_runtime;
  double sum_norm = 0.0;
  for (int i = 0; i < n; ++i) sum_norm = std::max(sum_norm, std::abs(terms[i]));
  double previous = sum_norm;
  variation = 0.0;
  Accumulator<D> acc(scratch);
  double* out = acc.data;
  for (int k = 1; k <= max_order; ++k) {
    const double* prev = terms + (k - 1) * n;
    double* next = terms + k * n;
    const double scale = h / k;
    // (M z_{k-1}) first, scaled once at the end: each term waits on the one before it, so the
    // chain of dependent operations, not their number, sets the cost.
    for (int i = 0; i < d; ++i) out[i] = m[i] * prev[0];
    const int columns = k == 1 ? n : d;
    for (int j = 1; j < columns; ++j) {
      const double pj = prev[j];
      const double* column = m + j * n;
      for (int i = 0; i < d; ++i) out[i] += column[i] * pj;
    }
    double term = 0.0;
    for (int i = 0; i < d; ++i) {
      next[i] = scale * out[i];
      term = std::max(term, std::abs(next[i]));
    }
    sum_norm = std::max(sum_norm, term);
    variation += term;
    if (term + previous <= kUnitRoundoff * sum_norm) return k;
    previous = term;
  }
  return -1;
}

// out(r, k) = sum_j rows(r, j) terms(j, k); rows row-major, out column-major.
template <int D>
void project_terms(const double* rows, int r_count, const double* terms, int n, int d_runtime,
                   int order, double* out, int out_stride) {
  const int d = D > 0 ? D : d_runtime;
  for (int r = 0; r < r_count; ++r) {
    const double* row = rows + r * n;
    double v = 0.0;
    for (int j = 0; j < n; ++j) v += row[j] * terms[j];
    out[r] = v;
  }
  for (int k = 1; k <= order; ++k) {
    const double* z = terms + k * n;
    double* o = out + k * out_stride;
    for (int r = 0; r < r_count; ++r) {
      const double* row = rows + r * n;
      double v = 0.0;
      for (int j = 0; j < d; ++j) v += row[j] * z[j];
      o[r] = v;
    }
  }
}

// y_k = z_k / (2 (2k + 1)) + sum_{l > k} z_l / (k + l + 1) over the dynamic block: the weights
// of H = sum_k z_k y_k^T (see piece_moments).
template <int D>
inline void gram_weights(const double* __restrict terms, int n, int d_runtime, int order, int k,
                         double* __restrict y) {
  const int d = D > 0 ? D : d_runtime;
  const double* reciprocal = poly::kReciprocal.value;
  const double* __restrict zk = terms + k * n;
  const double diagonal = 0.5 * reciprocal[2 * k];
  for (int i = 0; i < d; ++i) y[i] = diagonal * zk[i];
  for (int l = k + 1; l <= order; ++l) {
    const double w = reciprocal[k + l];
    const double* __restrict z = terms + l * n;
    for (int i = 0; i < d; ++i) y[i] += w * z[i];
  }
}

// Past the dynamic block z is the constant z_0: the Gram blocks there are mean z_0^T (mixed) and
// z_0 z_0^T.
template <int D>
void static_gram_blocks(const double* terms, int n, int d_runtime, const double* mean,
                        double* gram) {
  const int d = D > 0 ? D : d_runtime;
  for (int j = d; j < n; ++j) {
    for (int i = 0; i < d; ++i) gram[i + j * n] = gram[j + i * n] = mean[i] * terms[j];
    for (int i = d; i < n; ++i) gram[i + j * n] = terms[i] * terms[j];
  }
}

// Moments over the dynamic block; past it z is the constant z_0, so the mean and the end value
// are z_0, the slope is zero, and the Gram blocks are mean z_0^T (mixed) and z_0 z_0^T.
template <int D>
void piece_moments(const double* __restrict terms, int n, int d_runtime, int order,
                   double* __restrict mean, double* __restrict end, double* __restrict end_slope,
                   double* __restrict gram, double* __restrict scratch) {
  const int d = D > 0 ? D : d_runtime;
  const double* reciprocal = poly::kReciprocal.value;
  for (int i = 0; i < d; ++i) {
    double m = 0.0, e = 0.0, s = 0.0, weight = 0.0;
    for (int k = 0; k <= order; ++k, weight += 1.0) {
      const double z = terms[i + k * n];
      m += reciprocal[k] * z;
      e += z;
      s += weight * z;
    }
    mean[i] = m;
    end[i] = e;
    end_slope[i] = s;
  }
  for (int i = d; i < n; ++i) {
    mean[i] = end[i] = terms[i];
    end_slope[i] = 0.0;
  }
  if (!gram) return;
  // The dynamic block. The double sum is symmetric under k <-> l, so G = H + H^T with
  // H = sum_k z_k y_k^T, y_k = z_k / (2 (2k + 1)) + sum_{l > k} z_l / (k + l + 1): half the
  // pairs. Accumulated in local arrays, so that nothing the compiler cannot prove unaliased
  // sits in the loops.
  constexpr int kFixed = D > 0 ? D : 1;
  double local_y[kFixed], local_g[kFixed * kFixed];
  double* __restrict y = D > 0 ? local_y : scratch;
  double* __restrict g = D > 0 ? local_g : scratch + n;
  for (int i = 0; i < d * d; ++i) g[i] = 0.0;
  const int g_stride = D > 0 ? d : n;
  for (int k = 0; k <= order; ++k) {
    const double* __restrict zk = terms + k * n;
    gram_weights<D>(terms, n, d, order, k, y);
    for (int j = 0; j < d; ++j) {
      const double yj = y[j];
      for (int i = 0; i < d; ++i) g[i + j * g_stride] += zk[i] * yj;
    }
  }
  for (int j = 0; j < d; ++j)
    for (int i = 0; i <= j; ++i)
      gram[i + j * n] = gram[j + i * n] = g[i + j * g_stride] + g[j + i * g_stride];
  static_gram_blocks<D>(terms, n, d, mean, gram);
}

// The listed entries (i, j) of the dynamic block of the Gram matrix only, G_ij = H_ij + H_ji with
// H and y_k as in piece_moments: two products per pair and term instead of d^2 per term. The
// other entries of the block are not written.
template <int D>
void gram_pairs(const double* __restrict terms, int n, int d_runtime, int order,
                const GramPairs& pairs, double* __restrict gram, double* __restrict scratch) {
  const int d = D > 0 ? D : d_runtime;
  constexpr int kFixed = D > 0 ? D : 1;
  double local_y[kFixed], local_h[kFixed * (kFixed + 1)];
  double* __restrict y = D > 0 ? local_y : scratch;
  double* __restrict h = D > 0 ? local_h : scratch + n;
  const int pair_count = static_cast<int>(pairs.size());
  for (int p = 0; p < 2 * pair_count; ++p) h[p] = 0.0;
  for (int k = 0; k <= order; ++k) {
    const double* __restrict zk = terms + k * n;
    gram_weights<D>(terms, n, d, order, k, y);
    for (int p = 0; p < pair_count; ++p) {
      const auto [i, j] = pairs[p];
      h[2 * p] += zk[i] * y[j];
      h[2 * p + 1] += zk[j] * y[i];
    }
  }
  for (int p = 0; p < pair_count; ++p) {
    const auto [i, j] = pairs[p];
    gram[i + j * n] = gram[j + i * n] = h[2 * p] + h[2 * p + 1];
  }
}

}  // namespace

void TaylorPiece::resize(int dimension) {
  terms_.setZero(dimension, kMaxOrder + 1);
  zero_from_ = 0;
  written_order_ = 0;
  scratch_.setZero(dimension * (dimension + 2));
}

bool TaylorPiece::expand(const Eigen::MatrixXd& M, const Eigen::VectorXd& z0, double h,
                         int dynamic_rows) {
  h_ = h;
  dynamic_ = dynamic_rows;
  terms_.col(0) = z0;
  // Rows past the dynamic block must read as zero in every term after the first. They are
  // already zero from zero_from_ on; a smaller block clears the rows in between once.
  if (dynamic_ < zero_from_)
    terms_.block(dynamic_, 1, zero_from_ - dynamic_, written_order_).setZero();
  zero_from_ = dynamic_;
  if (dynamic_ == 0) {  // nothing moves: the piece is the constant z0
    order_ = 0;
    variation_bound_ = 0.0;
    return true;
  }
  const int n = static_cast<int>(M.rows());
  const int order = dispatch(dynamic_, [&](auto size) {
    return expand_terms<decltype(size)::value>(M.data(), n, dynamic_, terms_.data(), h, kMaxOrder,
                                               scratch_.data(), variation_bound_);
  });
  order_ = order < 0 ? kMaxOrder : order;
  written_order_ = std::max(written_order_, order_);
  return order >= 0;
}

void TaylorPiece::truncate(double s_end) {
  const int n = static_cast<int>(terms_.rows());
  double norms[kMaxOrder + 1];
  double sum_norm = 0.0;
  for (int i = 0; i < n; ++i) sum_norm = std::max(sum_norm, std::abs(terms_(i, 0)));
  norms[0] = sum_norm;
  double scale = s_end;
  for (int k = 1; k <= order_; ++k) {
    double* z = terms_.data() + k * n;
    double term = 0.0;
    for (int i = 0; i < dynamic_; ++i) {
      z[i] *= scale;
      term = std::max(term, std::abs(z[i]));
    }
    norms[k] = term;
    sum_norm = std::max(sum_norm, term);
    scale *= s_end;
  }
  // The scaled terms z_k s^k fall off faster than the series needed for the whole piece: drop
  // the tail by the stopping test of expand(), from the top down, so that the moments and
  // projections of the shorter piece do not carry terms below the unit roundoff.
  while (order_ >= 2 && norms[order_] + norms[order_ - 1] <= kUnitRoundoff * sum_norm) --order_;
  variation_bound_ = 0.0;
  for (int k = 1; k <= order_; ++k) variation_bound_ += norms[k];
  h_ *= s_end;
}

void TaylorPiece::project(const RowMatrix& rows, Eigen::MatrixXd& out) const {
  const int n = static_cast<int>(terms_.rows());
  const int r_count = static_cast<int>(rows.rows());
  if (r_count == 0) return;
  dispatch(dynamic_, [&](auto size) {
    project_terms<decltype(size)::value>(rows.data(), r_count, terms_.data(), n, dynamic_, order_,
                                         out.data(), static_cast<int>(out.rows()));
  });
}

void TaylorPiece::project_row(const double* row, double* a) const {
  const int n = static_cast<int>(terms_.rows());
  dispatch(dynamic_, [&](auto size) {
    project_terms<decltype(size)::value>(row, 1, terms_.data(), n, dynamic_, order_, a, 1);
  });
}

void TaylorPiece::moments(double* mean, double* end, double* end_slope, double* gram) const {
  const int n = static_cast<int>(terms_.rows());
  dispatch(dynamic_, [&](auto size) {
    piece_moments<decltype(size)::value>(terms_.data(), n, dynamic_, order_, mean, end, end_slope,
                                         gram, scratch_.data());
  });
}

void TaylorPiece::moments(double* mean, double* end, double* end_slope, double* gram,
                          const GramPairs& pairs) const {
  const int n = static_cast<int>(terms_.rows());
  dispatch(dynamic_, [&](auto size) {
    constexpr int D = decltype(size)::value;
    piece_moments<D>(terms_.data(), n, dynamic_, order_, mean, end, end_slope, nullptr,
                     scratch_.data());
    gram_pairs<D>(terms_.data(), n, dynamic_, order_, pairs, gram, scratch_.data());
    static_gram_blocks<D>(terms_.data(), n, dynamic_, mean, gram);
  });
}

}  // namespace pulsewise::detail
