#include "detail/piece_operators.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "detail/polynomial.hpp"

namespace pulsewise::detail {

namespace {

constexpr int kMaxOrder = TaylorPiece::kMaxOrder;
constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;
constexpr int kValueForms = 5;  // value and slope at s = 0 and 1, h times the mean

constexpr int linear_size(int d) { return d + 1; }
constexpr int quadratic_size(int d) { return d * (d + 1) / 2 + d + 1; }

// Dense copy of a sparse row over z.
std::vector<double> dense(const SparseRow& row, int n) {
  std::vector<double> out(n, 0.0);
  for (const SparseRow::Entry& e : row.entries) out[e.index] = e.value;
  return out;
}

// A folded linear form f . [x; 1] and a folded quadratic form (see the header) at x.
template <int D>
[[gnu::always_inline]] inline double linear(const double* f, const double* x) {
  double v = f[D];
  for (int i = 0; i < D; ++i) v += f[i] * x[i];
  return v;
}
template <int D>
[[gnu::always_inline]] inline double quadratic(const double* f, const double* products,
                                               const double* x) {
  constexpr int kProducts = D * (D + 1) / 2;
  double v = f[kProducts + D];
  for (int i = 0; i < kProducts; ++i) v += f[i] * products[i];
  for (int i = 0; i < D; ++i) v += f[kProducts + i] * x[i];
  return v;
}

// a[k] for k = 0..order from the folded forms of the coefficients.
template <int D>
void coefficients(const double* forms, const double* x, int order, double* a) {
  for (int k = 0; k <= order; ++k) a[k] = linear<D>(forms + k * linear_size(D), x);
}

// Appends the folded form of the linear functional r . z: its moving coefficients, then the
// static entries' part.
void append_linear(const double* r, int moving, int n, const std::vector<double>& fixed,
                   std::vector<double>& out) {
  double constant = 0.0;
  for (int j = moving; j < n; ++j) constant += r[j] * fixed[j - moving];
  out.insert(out.end(), r, r + moving);
  out.push_back(constant);
}

}  // namespace

PieceOperators::Poly PieceOperators::functional_poly(const double* row) const {
  Poly p(static_cast<std::size_t>((order_ + 1) * n_), 0.0);
  for (int k = 0; k <= order_; ++k) {
    const double* term = terms_.data() + k * n_ * n_;
    for (int i = 0; i < n_; ++i)
      if (row[i] != 0.0)
        for (int j = 0; j < n_; ++j) p[k * n_ + j] += row[i] * term[i * n_ + j];
  }
  return p;
}

void PieceOperators::add_poly(const Poly& p, std::vector<double>& out) const {
  for (int k = 0; k <= order_; ++k) append_linear(p.data() + k * n_, moving_, n_, static_, out);
}

void PieceOperators::add_value_rows(const Poly& p, double h_mean_weight) {
  std::vector<double> rows(static_cast<std::size_t>(kValueForms * n_), 0.0);
  for (int k = 0; k <= order_; ++k)
    for (int j = 0; j < n_; ++j) {
      const double c = p[k * n_ + j];
      if (k == 0) rows[j] = c;
      rows[n_ + j] += c;
      if (k == 1) rows[2 * n_ + j] = c;
      rows[3 * n_ + j] += k * c;
      rows[4 * n_ + j] += h_mean_weight * poly::kReciprocal.value[k] * c;
    }
  for (int m = 0; m < kValueForms; ++m)
    append_linear(rows.data() + m * n_, moving_, n_, static_, value_forms_);
}

// The folded form of z^T S z with S = weight * sum_{k,l} a_k^T b_l / (k + l + 1), the integral
// over s in [0, 1] of the product of two functionals with polynomial rows a_k and b_k.
void PieceOperators::add_quadratic(const Poly& a, const Poly& b, double weight,
                                   std::vector<double>& out) const {
  const int n = n_, d = moving_;
  std::vector<double> s(static_cast<std::size_t>(n * n), 0.0);
  for (int k = 0; k <= order_; ++k)
    for (int l = 0; l <= order_; ++l) {
      const double w = weight * poly::kReciprocal.value[k + l];
      for (int i = 0; i < n; ++i)
        for (int j = 0; j < n; ++j) s[i * n + j] += w * a[k * n + i] * b[l * n + j];
    }
  const auto sym = [&](int i, int j) { return s[i * n + j] + s[j * n + i]; };
  for (int i = 0; i < d; ++i)
    for (int j = i; j < d; ++j) out.push_back(i == j ? s[i * n + i] : sym(i, j));
  for (int i = 0; i < d; ++i) {
    double v = 0.0;
    for (int j = d; j < n; ++j) v += sym(i, j) * static_[j - d];
    out.push_back(v);
  }
  double constant = 0.0;
  for (int i = d; i < n; ++i)
    for (int j = d; j < n; ++j) constant += s[i * n + j] * static_[i - d] * static_[j - d];
  out.push_back(constant);
}

bool PieceOperators::build(const PatternData& data, double h, const double* z,
                           const KernelLayout& layout) {
  n_ = layout.size;
  moving_ = data.dynamic_rows;
  static_.assign(z + moving_, z + n_);
  // P_0 = I; P_k = (h / k) M P_{k-1}, whose rows past the moving block are zero. The terms are
  // summed until two consecutive ones fall below the unit roundoff relative to the largest
  // (infinity norms): the stopping test of the piece's own series, for every start state.
  const auto nn = static_cast<std::size_t>(n_ * n_);
  terms_.assign(nn, 0.0);
  for (int i = 0; i < n_; ++i) terms_[i * n_ + i] = 1.0;
  double sum_norm = 1.0, previous = 1.0;
  order_ = -1;
  for (int k = 1; k <= kMaxOrder && order_ < 0; ++k) {
    terms_.resize((k + 1) * nn, 0.0);
    const double* last = terms_.data() + (k - 1) * nn;
    double* next = terms_.data() + k * nn;
    const int inner = k == 1 ? n_ : moving_;  // past k = 1 only the moving rows are non-zero
    double norm = 0.0;
    for (int i = 0; i < moving_; ++i) {
      double row_sum = 0.0;
      for (int j = 0; j < n_; ++j) {
        double v = 0.0;
        for (int m = 0; m < inner; ++m) v += data.M(i, m) * last[m * n_ + j];
        next[i * n_ + j] = h / k * v;
        row_sum += std::abs(next[i * n_ + j]);
      }
      norm = std::max(norm, row_sum);
    }
    sum_norm = std::max(sum_norm, norm);
    if (norm + previous <= kUnitRoundoff * sum_norm) order_ = k;
    previous = norm;
  }
  if (order_ < 0) return false;
  build_forms(data, h, layout);
  terms_.clear();
  terms_.shrink_to_fit();
  return true;
}

void PieceOperators::build_forms(const PatternData& data, double h, const KernelLayout& layout) {
  const auto nn = static_cast<std::size_t>(n_ * n_);
  end_.clear();
  for (int i = 0; i < moving_; ++i) {
    std::vector<double> row(n_, 0.0);
    for (int k = 0; k <= order_; ++k)
      for (int j = 0; j < n_; ++j) row[j] += terms_[k * nn + i * n_ + j];
    append_linear(row.data(), moving_, n_, static_, end_);
  }
  value_forms_.clear();
  squares_.clear();
  signal_polys_.clear();
  for (int j = 0; j < layout.signals; ++j) {
    const Poly p = functional_poly(data.recorded.row(j).data());
    add_value_rows(p, h);
    add_quadratic(p, p, h, squares_);
    add_poly(p, signal_polys_);
  }
  inductor_polys_.clear();
  for (std::size_t k = 0; k < layout.inductor_states.size(); ++k) {
    if (layout.inductor_recorded[k] >= 0) continue;
    std::vector<double> unit(n_, 0.0);
    unit[layout.inductor_states[k]] = 1.0;
    const Poly p = functional_poly(unit.data());
    add_value_rows(p, 0.0);
    add_poly(p, inductor_polys_);
  }
  energies_.clear();
  if (layout.energy_accounting)
    for (std::size_t k = 0; k < layout.energy_roles.size(); ++k) {
      const PowerForm& form = data.power_forms[k];
      add_quadratic(functional_poly(dense(form.a, n_).data()),
                    functional_poly(dense(form.b, n_).data()), h * form.weight, energies_);
    }
  event_polys_.clear();
  event_bounds_.clear();
  const int l = linear_size(moving_);
  for (std::size_t d = 0; d < layout.diode_bits.size(); ++d) {
    const std::size_t at = event_polys_.size();
    add_poly(functional_poly(data.events.row(static_cast<Eigen::Index>(d)).data()), event_polys_);
    std::vector<double> bound(l, 0.0);
    for (int k = 1; k <= order_; ++k)
      for (int j = 0; j < l; ++j) bound[j] += std::abs(event_polys_[at + k * l + j]);
    event_bounds_.insert(event_bounds_.end(), bound.begin(), bound.end());
  }
}

bool PieceOperators::matches(const double* z) const {
  return std::equal(static_.begin(), static_.end(), z + moving_);
}

bool PieceOperators::apply(const KernelLayout& layout, const PieceTask& task,
                           const PieceSinks& sinks) const {
  if (!matches(task.z)) return false;
  switch (moving_) {
    case 1: return apply_fixed<1>(layout, task, sinks);
    case 2: return apply_fixed<2>(layout, task, sinks);
    case 3: return apply_fixed<3>(layout, task, sinks);
    case 4: return apply_fixed<4>(layout, task, sinks);
    default: return false;  // kernel_takes() rules these out
  }
}

template <int D>
bool PieceOperators::apply_fixed(const KernelLayout& layout, const PieceTask& task,
                                 const PieceSinks& sinks) const {
  constexpr int L = linear_size(D), Q = quadratic_size(D);
  const int stride = (order_ + 1) * L;
  double x[D], magnitude[D], products[D * (D + 1) / 2];
  for (int i = 0; i < D; ++i) {
    x[i] = task.z[i];
    magnitude[i] = std::abs(x[i]);
  }
  // No device condition may cross zero inside the piece: first the bound of its variation by
  // the operators' norms, then its polynomial (as find_event() does with the series).
  double a[kMaxOrder + 1];
  for (std::size_t d = 0; d < layout.diode_bits.size(); ++d) {
    const double* forms = event_polys_.data() + d * stride;
    if (linear<D>(forms, x) - linear<D>(event_bounds_.data() + d * L, magnitude) > 0) continue;
    coefficients<D>(forms, x, order_, a);
    double variation = 0.0;
    for (int k = 1; k <= order_; ++k) variation += std::abs(a[k]);
    if (a[0] - variation > 0) continue;
    const bool on = (task.pattern >> layout.diode_bits[d]) & 1u;
    if (poly::first_downcrossing(a, order_, on ? task.current_noise : task.voltage_noise,
                                 task.s_tolerance) >= 0)
      return false;
  }
  for (int i = 0, m = 0; i < D; ++i)
    for (int j = i; j < D; ++j) products[m++] = x[i] * x[j];
  CycleAccumulator& cycle = *sinks.cycle;
  // The extremes of functional f (a signal, or an inductor that is not one), with its interior
  // extremum where its slope changes sign.
  const auto extremes = [&](int f, const double* poly_forms, double& lo, double& hi) {
    const double* forms = value_forms_.data() + f * kValueForms * L;
    const double y0 = linear<D>(forms, x), y1 = linear<D>(forms + L, x);
    const double d0 = linear<D>(forms + 2 * L, x), d1 = linear<D>(forms + 3 * L, x);
    lo = std::min(y0, y1);
    hi = std::max(y0, y1);
    if (!poly::slope_changes_sign(d0, d1)) return;
    coefficients<D>(poly_forms, x, order_, a);
    const double v = poly::interior_extremum(a, order_, d0, d1, poly::kExtremumTolerance);
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  };
  for (int j = 0; j < layout.signals; ++j) {
    double lo, hi;
    extremes(j, signal_polys_.data() + j * stride, lo, hi);
    cycle.integral[j] += linear<D>(value_forms_.data() + (j * kValueForms + 4) * L, x);
    cycle.square_integral[j] += quadratic<D>(squares_.data() + j * Q, products, x);
    sinks.piece_min[j] = lo;
    sinks.piece_max[j] = hi;
    cycle.min[j] = std::min(cycle.min[j], lo);
    cycle.max[j] = std::max(cycle.max[j], hi);
  }
  if (layout.energy_accounting)
    for (std::size_t k = 0; k < layout.energy_roles.size(); ++k) {
      const double e = quadratic<D>(energies_.data() + k * Q, products, x);
      (layout.energy_roles[k] == EnergyRole::kSource ? cycle.energy_in : cycle.dissipated) += e;
      cycle.element_energy[k] += e;
    }
  int extra = 0;
  for (std::size_t k = 0; k < layout.inductor_states.size(); ++k) {
    double lo, hi;
    const int j = layout.inductor_recorded[k];
    if (j >= 0) {
      lo = sinks.piece_min[j];
      hi = sinks.piece_max[j];
    } else {
      extremes(layout.signals + extra, inductor_polys_.data() + extra * stride, lo, hi);
      ++extra;
    }
    sinks.inductor_peak[k] = std::max({sinks.inductor_peak[k], std::abs(lo), std::abs(hi)});
  }
  for (int i = 0; i < D; ++i) task.z[i] = linear<D>(end_.data() + i * L, x);
  return true;
}

}  // namespace pulsewise::detail
