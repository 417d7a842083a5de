#include "detail/piece_operators.hpp"

#include <algorithm>
#include <cmath>

#include "detail/piece_forms.hpp"
#include "detail/polynomial.hpp"

namespace pulsewise::detail {

namespace {

constexpr int kMaxOrder = TaylorPiece::kMaxOrder;
constexpr int kValueForms = 5;  // value and slope at s = 0 and 1, h times the mean

constexpr int linear_size(int d) { return d + 1; }
constexpr int quadratic_size(int d) { return d * (d + 1) / 2 + d + 1; }

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

}  // namespace

void PieceOperators::fold_linear(const Eigen::RowVectorXd& r, std::vector<double>& out) const {
  double constant = 0.0;
  for (int j = moving_; j < n_; ++j) constant += r[j] * static_[j - moving_];
  for (int j = 0; j < moving_; ++j) out.push_back(r[j]);
  out.push_back(constant);
}

void PieceOperators::fold_polynomial(const Eigen::MatrixXd& p, std::vector<double>& out) const {
  for (Eigen::Index k = 0; k < p.rows(); ++k) fold_linear(p.row(k), out);
}

// For symmetric w: the products x_i x_j (i <= j) take w_ii or 2 w_ij, the moving entries the
// cross terms with the static ones, the constant the static block.
void PieceOperators::fold_quadratic(const Eigen::MatrixXd& w, double weight,
                                    std::vector<double>& out) const {
  const int d = moving_;
  for (int i = 0; i < d; ++i)
    for (int j = i; j < d; ++j) out.push_back(weight * (i == j ? w(i, i) : 2 * w(i, j)));
  for (int i = 0; i < d; ++i) {
    double v = 0.0;
    for (int j = d; j < n_; ++j) v += 2 * w(i, j) * static_[j - d];
    out.push_back(weight * v);
  }
  double constant = 0.0;
  for (int i = d; i < n_; ++i)
    for (int j = d; j < n_; ++j) constant += w(i, j) * static_[i - d] * static_[j - d];
  out.push_back(weight * constant);
}

void PieceOperators::add_value_forms(const Eigen::MatrixXd& p, double h_mean_weight) {
  Eigen::MatrixXd ends(4, n_);
  end_rows(p, ends, 0);
  for (Eigen::Index m = 0; m < ends.rows(); ++m) fold_linear(ends.row(m), value_forms_);
  fold_linear(h_mean_weight * mean_row(p), value_forms_);
}

bool PieceOperators::build(const PatternData& data, double h, const double* z,
                           const KernelLayout& layout) {
  n_ = layout.size;
  moving_ = data.dynamic_rows;
  static_.assign(z + moving_, z + n_);
  std::vector<Eigen::MatrixXd> terms;
  if (!unit_terms(data, h, n_, terms)) return false;
  order_ = static_cast<int>(terms.size()) - 1;
  build_forms(data, h, layout, terms);
  return true;
}

void PieceOperators::build_forms(const PatternData& data, double h, const KernelLayout& layout,
                                 const std::vector<Eigen::MatrixXd>& terms) {
  Eigen::MatrixXd transition = Eigen::MatrixXd::Zero(n_, n_);
  for (const Eigen::MatrixXd& t : terms) transition += t;
  end_.clear();
  for (int i = 0; i < moving_; ++i) fold_linear(transition.row(i), end_);
  value_forms_.clear();
  squares_.clear();
  signal_polys_.clear();
  for (int j = 0; j < layout.signals; ++j) {
    const Eigen::MatrixXd p = polynomial_rows(data.recorded.row(j), terms);
    add_value_forms(p, h);
    fold_quadratic(product_form(p, p), h, squares_);
    fold_polynomial(p, signal_polys_);
  }
  inductor_polys_.clear();
  for (std::size_t k = 0; k < layout.inductor_states.size(); ++k) {
    if (layout.inductor_recorded[k] >= 0) continue;
    const Eigen::MatrixXd p =
        polynomial_rows(Eigen::RowVectorXd::Unit(n_, layout.inductor_states[k]), terms);
    add_value_forms(p, 0.0);
    fold_polynomial(p, inductor_polys_);
  }
  energies_.clear();
  if (layout.energy_accounting)
    for (std::size_t k = 0; k < layout.energy_roles.size(); ++k) {
      const PowerForm& form = data.power_forms[k];
      fold_quadratic(product_form(polynomial_rows(dense(form.a, n_), terms),
                                  polynomial_rows(dense(form.b, n_), terms)),
                     h * form.weight, energies_);
    }
  event_polys_.clear();
  event_bounds_.clear();
  const int l = linear_size(moving_);
  for (std::size_t d = 0; d < layout.diode_bits.size(); ++d) {
    const std::size_t at = event_polys_.size();
    fold_polynomial(polynomial_rows(data.events.row(static_cast<Eigen::Index>(d)), terms),
                    event_polys_);
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
