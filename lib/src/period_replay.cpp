#include "detail/period_replay.hpp"

namespace pulsewise::detail {

namespace {

// T_k, k = 0..K: column i of T_k is term k of the series of exp(M h s) e_i, so that term k of
// exp(M h s) z is T_k z. The series and its stopping test are those of TaylorPiece; the piece
// engine chose h within the configuration's sub-step bound, so each series converges.
bool unit_terms(const PatternData& pd, double h, int n, std::vector<Eigen::MatrixXd>& terms) {
  TaylorPiece piece(n);
  Eigen::VectorXd unit = Eigen::VectorXd::Zero(n);
  terms.clear();
  for (int i = 0; i < n; ++i) {
    unit.setZero();
    unit[i] = 1.0;
    if (!piece.expand(pd.M, unit, h, pd.dynamic_rows)) return false;
    while (static_cast<int>(terms.size()) <= piece.order())
      terms.push_back(Eigen::MatrixXd::Zero(n, n));
    for (int k = 0; k <= piece.order(); ++k) terms[k].col(i) = piece.terms().col(k);
  }
  return true;
}

// Row k: coefficient k of the polynomial c . z(s) as a linear form in the start state.
Eigen::MatrixXd polynomial_rows(const Eigen::RowVectorXd& c,
                                const std::vector<Eigen::MatrixXd>& t) {
  Eigen::MatrixXd rows(static_cast<Eigen::Index>(t.size()), c.size());
  for (std::size_t k = 0; k < t.size(); ++k) rows.row(static_cast<Eigen::Index>(k)) = c * t[k];
  return rows;
}

// The symmetric W with integral over s in [0, 1] of a(s) b(s) = z^T W z, where a and b have the
// polynomial rows pa and pb: sum over k, l of pa_k^T pb_l / (k + l + 1).
Eigen::MatrixXd product_form(const Eigen::MatrixXd& pa, const Eigen::MatrixXd& pb) {
  const Eigen::Index terms = pa.rows();
  Eigen::MatrixXd weighted = Eigen::MatrixXd::Zero(terms, pb.cols());
  for (Eigen::Index k = 0; k < terms; ++k)
    for (Eigen::Index l = 0; l < pb.rows(); ++l)
      weighted.row(k) += pb.row(l) / static_cast<double>(k + l + 1);
  const Eigen::MatrixXd w = pa.transpose() * weighted;
  return 0.5 * (w + w.transpose());
}

Eigen::RowVectorXd dense(const SparseRow& row, int n) {
  Eigen::RowVectorXd out = Eigen::RowVectorXd::Zero(n);
  for (const SparseRow::Entry& e : row.entries) out[e.index] = e.value;
  return out;
}

// Value and slope at both ends of the piece, from the polynomial rows.
void end_rows(const Eigen::MatrixXd& p, Eigen::MatrixXd& ends, Eigen::Index at) {
  ends.row(at) = p.row(0);
  ends.row(at + 1) = p.colwise().sum();
  ends.row(at + 2).setZero();
  ends.row(at + 3).setZero();
  for (Eigen::Index k = 1; k < p.rows(); ++k) {
    if (k == 1) ends.row(at + 2) = p.row(1);
    ends.row(at + 3) += static_cast<double>(k) * p.row(k);
  }
}

}  // namespace

void PeriodReplay::clear() {
  steps_.clear();
  piece_of_step_.clear();
  pieces_.clear();
}

bool PeriodReplay::build(std::vector<PeriodStep> steps, int n, const ReplayFunctionals& f) {
  clear();
  signals_ = f.signals;
  energies_ = 0;
  for (const PeriodStep& s : steps)
    if (s.data && f.energies) energies_ = static_cast<int>(s.data->power_forms.size());
  linear_ = Eigen::MatrixXd::Zero(signals_, n);
  quadratic_ = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(signals_ + energies_) * n, n);
  Eigen::MatrixXd to_piece = Eigen::MatrixXd::Identity(n, n);  // start of period -> piece start
  std::vector<Eigen::MatrixXd> t;
  for (const PeriodStep& step : steps) {
    piece_of_step_.push_back(step.data ? static_cast<int>(pieces_.size()) : -1);
    if (!step.data) continue;
    if (!unit_terms(*step.data, step.value, n, t)) {
      clear();
      return false;
    }
    Eigen::MatrixXd transition = Eigen::MatrixXd::Zero(n, n);
    for (const Eigen::MatrixXd& tk : t) transition += tk;
    pieces_.push_back(piece_rows(*step.data, step.value, f, t, transition));
    add_forms(*step.data, pieces_.back(), t, to_piece);
    to_piece = transition * to_piece;
  }
  steps_ = std::move(steps);
  return true;
}

PeriodReplay::Piece PeriodReplay::piece_rows(const PatternData& pd, double h,
                                             const ReplayFunctionals& f,
                                             const std::vector<Eigen::MatrixXd>& t,
                                             const Eigen::MatrixXd& transition) {
  const Eigen::Index n = transition.cols();
  const int tracked = f.signals + static_cast<int>(f.extra_states.size());
  Piece pc;
  pc.order = static_cast<int>(t.size()) - 1;
  pc.dynamic_rows = pd.dynamic_rows;
  pc.h = h;
  pc.conditions = static_cast<int>(pd.events.rows());
  pc.signals = f.signals;
  pc.on_state.resize(pc.transition_row() + pd.dynamic_rows, n);
  pc.on_state.bottomRows(pd.dynamic_rows) = transition.topRows(pd.dynamic_rows);
  pc.on_magnitude = Eigen::MatrixXd::Zero(pc.conditions + tracked, n);
  const auto add_variation = [&](Eigen::Index row, const Eigen::MatrixXd& p) {
    for (Eigen::Index k = 1; k < p.rows(); ++k) pc.on_magnitude.row(row) += p.row(k).cwiseAbs();
  };
  for (int d = 0; d < pc.conditions; ++d) {
    const Eigen::MatrixXd p = polynomial_rows(pd.events.row(d), t);
    pc.on_state.row(d) = p.row(0);
    add_variation(d, p);
  }
  for (int j = 0; j < tracked; ++j) {
    Eigen::RowVectorXd row = Eigen::RowVectorXd::Zero(n);
    if (j < f.signals)
      row = pd.recorded.row(j);
    else
      row[f.extra_states[j - f.signals]] = 1.0;
    pc.polynomial.push_back(polynomial_rows(row, t));
    add_variation(pc.conditions + j, pc.polynomial.back());
    if (j < f.signals) end_rows(pc.polynomial.back(), pc.on_state, pc.ends_row() + 4 * j);
  }
  return pc;
}

// The piece's contribution to the period's forms: its own forms in its start state, mapped back
// to the start of the period by to_piece.
void PeriodReplay::add_forms(const PatternData& pd, const Piece& pc,
                             const std::vector<Eigen::MatrixXd>& t,
                             const Eigen::MatrixXd& to_piece) {
  const Eigen::Index n = to_piece.cols();
  const auto add_form = [&](int slot, const Eigen::MatrixXd& w, double weight) {
    quadratic_.middleRows(static_cast<Eigen::Index>(slot) * n, n) +=
        weight * (to_piece.transpose() * w * to_piece);
  };
  for (int j = 0; j < signals_; ++j) {
    const Eigen::MatrixXd& p = pc.polynomial[j];
    Eigen::RowVectorXd mean = Eigen::RowVectorXd::Zero(n);
    for (Eigen::Index k = 0; k < p.rows(); ++k) mean += p.row(k) / static_cast<double>(k + 1);
    linear_.row(j) += pc.h * mean * to_piece;
    add_form(j, product_form(p, p), pc.h);
  }
  for (int k = 0; k < energies_; ++k) {
    const PowerForm& form = pd.power_forms[k];
    const Eigen::MatrixXd a = polynomial_rows(dense(form.a, static_cast<int>(n)), t);
    const Eigen::MatrixXd b = polynomial_rows(dense(form.b, static_cast<int>(n)), t);
    add_form(signals_ + k, product_form(a, b), pc.h * form.weight);
  }
}

void PeriodReplay::period_integrals(const Eigen::VectorXd& w, double* integral,
                                    double* square_integral, double* element_energy) const {
  const Eigen::Index n = w.size();
  for (int j = 0; j < signals_; ++j) integral[j] = linear_.row(j).dot(w);
  product_.noalias() = quadratic_ * w;
  for (int j = 0; j < signals_; ++j) square_integral[j] = product_.segment(j * n, n).dot(w);
  for (int k = 0; k < energies_; ++k)
    element_energy[k] = product_.segment((signals_ + k) * n, n).dot(w);
}

}  // namespace pulsewise::detail
