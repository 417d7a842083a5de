#include "detail/piece_forms.hpp"

#include "detail/taylor_piece.hpp"

namespace pulsewise::detail {

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

Eigen::MatrixXd polynomial_rows(const Eigen::RowVectorXd& c,
                                const std::vector<Eigen::MatrixXd>& t) {
  Eigen::MatrixXd rows(static_cast<Eigen::Index>(t.size()), c.size());
  for (std::size_t k = 0; k < t.size(); ++k) rows.row(static_cast<Eigen::Index>(k)) = c * t[k];
  return rows;
}

Eigen::MatrixXd product_form(const Eigen::MatrixXd& pa, const Eigen::MatrixXd& pb) {
  const Eigen::Index terms = pa.rows();
  Eigen::MatrixXd weighted = Eigen::MatrixXd::Zero(terms, pb.cols());
  for (Eigen::Index k = 0; k < terms; ++k)
    for (Eigen::Index l = 0; l < pb.rows(); ++l)
      weighted.row(k) += pb.row(l) / static_cast<double>(k + l + 1);
  const Eigen::MatrixXd w = pa.transpose() * weighted;
  return 0.5 * (w + w.transpose());
}

Eigen::RowVectorXd mean_row(const Eigen::MatrixXd& p) {
  Eigen::RowVectorXd mean = Eigen::RowVectorXd::Zero(p.cols());
  for (Eigen::Index k = 0; k < p.rows(); ++k) mean += p.row(k) / static_cast<double>(k + 1);
  return mean;
}

Eigen::RowVectorXd dense(const SparseRow& row, int n) {
  Eigen::RowVectorXd out = Eigen::RowVectorXd::Zero(n);
  for (const SparseRow::Entry& e : row.entries) out[e.index] = e.value;
  return out;
}

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

}  // namespace pulsewise::detail
