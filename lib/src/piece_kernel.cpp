#include "detail/piece_kernel.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>

#include "detail/polynomial.hpp"

namespace pulsewise::detail {

namespace {

constexpr int kMaxOrder = TaylorPiece::kMaxOrder;
constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;
constexpr double kInf = std::numeric_limits<double>::infinity();
using poly::kExtremumTolerance;
using poly::slope_changes_sign;

// The moving block of the terms z_k = (M h)^k z0 / k!; past it z is the constant z0.
template <int D>
struct Series {
  double term[kMaxOrder + 1][D];
  const double* start = nullptr;  // z0, every entry
  int size = 0;
  int order = 0;
  double variation = 0.0;  // sum over k >= 1 of max_i |z_k[i]| (TaylorPiece::variation_bound)
  double h = 0.0;
};

// Moments over s in [0, 1], every entry of z (see TaylorPiece::moments).
struct Moments {
  double mean[kKernelMaxSize], end[kKernelMaxSize], end_slope[kKernelMaxSize];
  double slope_at_start[kKernelMaxSize];         // z_1
  double gram[kKernelMaxSize * kKernelMaxSize];  // column-major, stride = size
};

double max_abs(const double* v, int n) {
  double out = 0.0;
  for (int i = 0; i < n; ++i) out = std::max(out, std::abs(v[i]));
  return out;
}

// TaylorPiece::expand (expand_terms in taylor_piece.cpp): the recursion with the stopping test
// of Al-Mohy and Higham, the same operations in the same order.
template <int D>
[[gnu::always_inline]] inline bool expand(const double* m, const double* z0, int n, double h,
                                          Series<D>& s) {
  double block[D][D];  // block[j][i] = M(i, j)
  for (int j = 0; j < D; ++j)
    for (int i = 0; i < D; ++i) block[j][i] = m[i + j * n];
  s.start = z0;
  s.size = n;
  s.h = h;
  for (int i = 0; i < D; ++i) s.term[0][i] = z0[i];
  double sum_norm = max_abs(z0, n), previous = sum_norm;
  s.variation = 0.0;
  for (int k = 1; k <= kMaxOrder; ++k) {
    const double* prev = s.term[k - 1];
    double out[D];
    for (int i = 0; i < D; ++i) out[i] = block[0][i] * prev[0];
    for (int j = 1; j < D; ++j)
      for (int i = 0; i < D; ++i) out[i] += block[j][i] * prev[j];
    if (k == 1)  // the inputs drive the states
      for (int j = D; j < n; ++j)
        for (int i = 0; i < D; ++i) out[i] += m[i + j * n] * z0[j];
    const double scale = h / k;
    double term = 0.0;
    for (int i = 0; i < D; ++i) {
      s.term[k][i] = scale * out[i];
      term = std::max(term, std::abs(s.term[k][i]));
    }
    sum_norm = std::max(sum_norm, term);
    s.variation += term;
    if (term + previous <= kUnitRoundoff * sum_norm) {
      s.order = k;
      return true;
    }
    previous = term;
  }
  s.order = kMaxOrder;
  return false;
}

// TaylorPiece::truncate: restrict to [0, s_end], renormalise, trim the tail.
template <int D>
[[gnu::always_inline]] inline void truncate(Series<D>& s, double s_end) {
  double norms[kMaxOrder + 1];
  double sum_norm = max_abs(s.start, s.size);
  norms[0] = sum_norm;
  double scale = s_end;
  for (int k = 1; k <= s.order; ++k) {
    double term = 0.0;
    for (int i = 0; i < D; ++i) {
      s.term[k][i] *= scale;
      term = std::max(term, std::abs(s.term[k][i]));
    }
    norms[k] = term;
    sum_norm = std::max(sum_norm, term);
    scale *= s_end;
  }
  while (s.order >= 2 && norms[s.order] + norms[s.order - 1] <= kUnitRoundoff * sum_norm) --s.order;
  s.h *= s_end;
}

// a[k] = row . z_k (TaylorPiece::project_row).
template <int D>
[[gnu::always_inline]] inline void project(const double* row, const Series<D>& s, double* a,
                                           int stride = 1) {
  double v = 0.0;
  for (int j = 0; j < s.size; ++j) v += row[j] * s.start[j];
  a[0] = v;
  for (int k = 1; k <= s.order; ++k) {
    double w = 0.0;
    for (int j = 0; j < D; ++j) w += row[j] * s.term[k][j];
    a[k * stride] = w;
  }
}

// Kept out of line: inlined into the piece, the extremum search slowed the whole loop down
// (bench_kernel_probe, docs/performance.md sixth round).
template <int D>
[[gnu::noinline]] double interior_extremum(const double* row, const Series<D>& s, double d0,
                                           double d1) {
  double a[kMaxOrder + 1];
  project<D>(row, s, a);
  return poly::interior_extremum(a, s.order, d0, d1, kExtremumTolerance);
}

template <int D>
[[gnu::noinline]] double state_extremum(int state, const Series<D>& s, double d0, double d1) {
  double a[kMaxOrder + 1];
  for (int k = 0; k <= s.order; ++k) a[k] = s.term[k][state];
  return poly::interior_extremum(a, s.order, d0, d1, kExtremumTolerance);
}

// H += z_k y_k^T over the moving block (see moments()).
template <int D>
[[gnu::always_inline]] inline void add_outer(const double* zk, const double* y, double* g) {
  for (int j = 0; j < D; ++j)
    for (int i = 0; i < D; ++i) g[i + j * D] += zk[i] * y[j];
}

// y0 += sum_{l >= k+2} z_l / (k + l + 1) and y1 += sum_{l >= k+2} z_l / (k + l + 2), in order
// of l. For an even block the entries go two at a time through 16-byte vector operations
// (GCC vector extensions), which round each lane exactly as the scalar operations do.
template <int D>
[[gnu::always_inline]] inline void accumulate_later_terms(const Series<D>& s, int k, double* y0,
                                                          double* y1) {
  const double* reciprocal = poly::kReciprocal.value;
  const int order = s.order;
  if constexpr (D % 2 == 0) {
    using Pair = double __attribute__((vector_size(16)));
    Pair a[D / 2], b[D / 2];
    std::memcpy(a, y0, sizeof a);
    std::memcpy(b, y1, sizeof b);
    for (int l = k + 2; l <= order; ++l) {
      Pair z[D / 2];
      std::memcpy(z, s.term[l], sizeof z);
      const double w0 = reciprocal[k + l], w1 = reciprocal[k + 1 + l];
      for (int i = 0; i < D / 2; ++i) {
        a[i] += w0 * z[i];
        b[i] += w1 * z[i];
      }
    }
    std::memcpy(y0, a, sizeof a);
    std::memcpy(y1, b, sizeof b);
  } else {
    for (int l = k + 2; l <= order; ++l) {
      const double* zl = s.term[l];
      const double w0 = reciprocal[k + l], w1 = reciprocal[k + 1 + l];
      for (int i = 0; i < D; ++i) {
        y0[i] += w0 * zl[i];
        y1[i] += w1 * zl[i];
      }
    }
  }
}

// The Gram block of the moving entries, G = H + H^T with H = sum_k z_k y_k^T and
// y_k = z_k / (2 (2k + 1)) + sum_{l > k} z_l / (k + l + 1) (as piece_moments in
// taylor_piece.cpp). Two weight vectors y_k, y_{k+1} per pass over the later terms, so that each
// term is loaded once for both; every accumulator still sees the same operations in the same
// order, so the result is identical to the bit.
template <int D>
[[gnu::always_inline]] inline void gram_block(const Series<D>& s, double* g) {
  const int order = s.order;
  const double* reciprocal = poly::kReciprocal.value;
  for (int i = 0; i < D * D; ++i) g[i] = 0.0;
  int k = 0;
  for (; k + 1 <= order; k += 2) {
    const double* z0 = s.term[k];
    const double* z1 = s.term[k + 1];
    const double d0 = 0.5 * reciprocal[2 * k], d1 = 0.5 * reciprocal[2 * k + 2];
    double y0[D], y1[D];
    for (int i = 0; i < D; ++i) {
      y0[i] = d0 * z0[i];
      y1[i] = d1 * z1[i];
    }
    const double w01 = reciprocal[2 * k + 1];
    for (int i = 0; i < D; ++i) y0[i] += w01 * z1[i];
    accumulate_later_terms<D>(s, k, y0, y1);
    add_outer<D>(z0, y0, g);
    add_outer<D>(z1, y1, g);
  }
  if (k == order) {  // the last term alone: y_K = z_K / (2 (2K + 1))
    const double* zk = s.term[k];
    const double d = 0.5 * reciprocal[2 * k];
    double y[D];
    for (int i = 0; i < D; ++i) y[i] = d * zk[i];
    add_outer<D>(zk, y, g);
  }
}

// TaylorPiece::moments (piece_moments and static_gram_blocks in taylor_piece.cpp), every
// accumulator with the same operations in the same order.
template <int D>
[[gnu::always_inline]] inline void moments(const Series<D>& s, bool with_gram, Moments& out) {
  const int n = s.size, order = s.order;
  const double* reciprocal = poly::kReciprocal.value;
  double mean[D] = {}, end[D] = {}, slope[D] = {};
  double weight = 0.0;
  for (int k = 0; k <= order; ++k, weight += 1.0) {
    const double* zk = s.term[k];
    for (int i = 0; i < D; ++i) {
      mean[i] += reciprocal[k] * zk[i];
      end[i] += zk[i];
      slope[i] += weight * zk[i];
    }
  }
  for (int i = 0; i < D; ++i) {
    out.mean[i] = mean[i];
    out.end[i] = end[i];
    out.end_slope[i] = slope[i];
    out.slope_at_start[i] = s.term[1][i];
  }
  for (int i = D; i < n; ++i) {
    out.mean[i] = out.end[i] = s.start[i];
    out.end_slope[i] = out.slope_at_start[i] = 0.0;
  }
  if (!with_gram) return;
  double g[D * D];
  gram_block<D>(s, g);
  double* gram = out.gram;
  for (int j = 0; j < D; ++j)
    for (int i = 0; i <= j; ++i) gram[i + j * n] = gram[j + i * n] = g[i + j * D] + g[j + i * D];
  for (int j = D; j < n; ++j) {
    for (int i = 0; i < D; ++i) gram[i + j * n] = gram[j + i * n] = mean[i] * s.start[j];
    for (int i = D; i < n; ++i) gram[i + j * n] = s.start[i] * s.start[j];
  }
}

// The earliest device event on the piece (find_event in simulation.cpp): (s, row) or (-1, -1).
template <int D>
[[gnu::always_inline]] inline std::pair<double, int> find_event(const KernelLayout& layout,
                                                                const PieceTask& task,
                                                                const Series<D>& s) {
  const PatternData& pd = *task.data;
  double best = kInf;
  int which = -1;
  const int rows = static_cast<int>(layout.diode_bits.size());
  for (int d = 0; d < rows; ++d) {
    const double* row = pd.events.row(d).data();
    double g0 = 0.0;
    for (int j = 0; j < s.size; ++j) g0 += row[j] * s.start[j];
    if (g0 > pd.event_dynamic_l1[d] * s.variation) continue;
    const bool on = (task.pattern >> layout.diode_bits[d]) & 1u;
    double coeffs[kMaxOrder + 1];
    project<D>(row, s, coeffs);
    double variation = 0.0;
    for (int k = 1; k <= s.order; ++k) variation += std::abs(coeffs[k]);
    if (coeffs[0] - variation > 0) continue;
    const double at = poly::first_downcrossing(
        coeffs, s.order, on ? task.current_noise : task.voltage_noise, task.s_tolerance);
    if (at >= 0 && at < best) {
      best = at;
      which = d;
    }
  }
  return {which >= 0 ? best : -1.0, which};
}

// accumulate_piece in simulation.cpp: averages, RMS and extremes of the recorded signals.
template <int D>
[[gnu::always_inline]] inline void accumulate_signals(const KernelLayout& layout,
                                                      const PieceTask& task, const Series<D>& s,
                                                      const Moments& mo, const PieceSinks& sinks) {
  const PatternData& pd = *task.data;
  CycleAccumulator& cycle = *sinks.cycle;
  const double h = s.h;
  for (int j = 0; j < layout.signals; ++j) {
    const SparseRow& c = pd.recorded_sparse[j];
    const auto [y0, y1, d0, d1, average] =
        dots<5>(c, {s.start, mo.end, mo.slope_at_start, mo.end_slope, mo.mean});
    const bool turns = slope_changes_sign(d0, d1);
    cycle.integral[j] += h * average;
    double square;
    if (layout.use_gram) {
      square = bilinear(c, mo.gram, s.size, c);
    } else {
      double a[kMaxOrder + 1];
      project<D>(pd.recorded.row(j).data(), s, a);
      square = poly::product_integral(a, a, s.order);
    }
    cycle.square_integral[j] += h * square;
    double lo = std::min(y0, y1), hi = std::max(y0, y1);
    if (turns) {
      const double v = interior_extremum<D>(pd.recorded.row(j).data(), s, d0, d1);
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
    sinks.piece_min[j] = lo;
    sinks.piece_max[j] = hi;
    cycle.min[j] = std::min(cycle.min[j], lo);
    cycle.max[j] = std::max(cycle.max[j], hi);
  }
}

template <int D>
[[gnu::always_inline]] inline void accumulate_energy(const KernelLayout& layout,
                                                     const PieceTask& task, const Series<D>& s,
                                                     const Moments& mo, const PieceSinks& sinks) {
  const PatternData& pd = *task.data;
  CycleAccumulator& cycle = *sinks.cycle;
  for (std::size_t k = 0; k < layout.energy_roles.size(); ++k) {
    const PowerForm& form = pd.power_forms[k];
    const double e = s.h * form.weight * bilinear(form.a, mo.gram, s.size, form.b);
    (layout.energy_roles[k] == EnergyRole::kSource ? cycle.energy_in : cycle.dissipated) += e;
    cycle.element_energy[k] += e;
  }
}

// track_inductor_peaks in simulation.cpp.
template <int D>
[[gnu::always_inline]] inline void track_inductor_peaks(const KernelLayout& layout,
                                                        const Series<D>& s, const Moments& mo,
                                                        const PieceSinks& sinks) {
  for (std::size_t k = 0; k < layout.inductor_states.size(); ++k) {
    double& best = sinks.inductor_peak[k];
    const int j = layout.inductor_recorded[k];
    if (j >= 0) {
      best = std::max({best, std::abs(sinks.piece_min[j]), std::abs(sinks.piece_max[j])});
      continue;
    }
    const int state = layout.inductor_states[k];
    double peak = std::max(std::abs(s.start[state]), std::abs(mo.end[state]));
    const double d0 = mo.slope_at_start[state], d1 = mo.end_slope[state];
    if (state < D && slope_changes_sign(d0, d1))
      peak = std::max(peak, std::abs(state_extremum<D>(state, s, d0, d1)));
    best = std::max(best, peak);
  }
}

template <int D>
PieceOutcome run(const KernelLayout& layout, const PieceTask& task, const PieceSinks& sinks) {
  const PatternData& pd = *task.data;
  const int n = layout.size;
  Series<D> s;
  PieceOutcome outcome;
  // The start state is read in place: copy it, the end state overwrites task.z.
  double start[kKernelMaxSize] = {};
  for (int i = 0; i < n; ++i) start[i] = task.z[i];
  if (!expand<D>(pd.M.data(), start, n, task.h, s)) {
    outcome.converged = false;
    return outcome;
  }
  const auto [s_event, which] = find_event<D>(layout, task, s);
  if (which >= 0) truncate<D>(s, std::max(s_event, 0.0));
  Moments mo;
  moments<D>(s, layout.use_gram, mo);
  accumulate_signals<D>(layout, task, s, mo, sinks);
  if (layout.energy_accounting) accumulate_energy<D>(layout, task, s, mo, sinks);
  track_inductor_peaks<D>(layout, s, mo, sinks);
  if (task.coefficients)
    for (int r = 0; r < layout.signals; ++r)
      project<D>(pd.recorded.row(r).data(), s, task.coefficients + r, task.coefficient_rows);
  for (int i = 0; i < D; ++i) task.z[i] = mo.end[i];
  outcome.event = which;
  outcome.h = s.h;
  outcome.order = s.order;
  return outcome;
}

}  // namespace

PieceOutcome run_piece_kernel(const KernelLayout& layout, const PieceTask& task,
                              const PieceSinks& sinks) {
  switch (task.data->dynamic_rows) {
    case 1: return run<1>(layout, task, sinks);
    case 2: return run<2>(layout, task, sinks);
    case 3: return run<3>(layout, task, sinks);
    case 4: return run<4>(layout, task, sinks);
    default: return {false, -1, 0.0, 0};  // kernel_takes() rules these out
  }
}

}  // namespace pulsewise::detail
