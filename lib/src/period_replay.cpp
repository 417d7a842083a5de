#include "detail/period_replay.hpp"

#include "detail/piece_forms.hpp"

namespace pulsewise::detail {

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
    linear_.row(j) += pc.h * mean_row(p) * to_piece;
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
