// The polynomial kernels of the exact path: the truncated Taylor series of one piece, its
// truncation at an event, its moments, and the Horner evaluations that the event and extremum
// searches use. References: Eigen's matrix exponential (unsupported MatrixFunctions module,
// scaling and squaring with Pade approximants after N. J. Higham, SIAM J. Matrix Anal. Appl.
// 26(4), 2005), Gauss-Legendre quadrature, and derivatives taken by hand.
#include <gtest/gtest.h>

#include <unsupported/Eigen/MatrixFunctions>

#include <cmath>

#include "detail/polynomial.hpp"
#include "detail/taylor_piece.hpp"

namespace {

using pulsewise::detail::TaylorPiece;
namespace poly = pulsewise::detail::poly;

// p(s) = (s - 1/4)(s - 1/2)(s - 2) = s^3 - 2.75 s^2 + 1.625 s - 0.25, so
// p'(s) = 3 s^2 - 5.5 s + 1.625 and p''(s) = 6 s - 5.5 (differentiated by hand).
constexpr double kCubic[] = {-0.25, 1.625, -2.75, 1.0};

TEST(Polynomial, SplitHornerAndDerivativeCoefficientsGiveTheValueSlopeAndCurvatureOfACubic) {
  double slope[3], curvature[2];
  poly::derivative_coefficients(kCubic, 3, slope);
  poly::derivative_coefficients(slope, 2, curvature);
  for (double s : {0.0, 0.1, 0.25, 0.6, 1.0}) {
    EXPECT_NEAR(poly::eval(kCubic, 3, s), (s - 0.25) * (s - 0.5) * (s - 2.0), 1e-15) << s;
    EXPECT_NEAR(poly::eval(slope, 2, s), 3 * s * s - 5.5 * s + 1.625, 1e-15) << s;
    EXPECT_NEAR(poly::eval(curvature, 1, s), 6 * s - 5.5, 1e-15) << s;
  }
  // Even and odd orders take different paths through the split; a quartic with known roots.
  // q(s) = (s - 1/4) p(s) = s^4 - 3 s^3 + 2.3125 s^2 - 0.65625 s + 0.0625.
  const double quartic[] = {0.0625, -0.65625, 2.3125, -3.0, 1.0};
  for (double s : {0.0, 0.3, 0.7, 1.0})
    EXPECT_NEAR(poly::eval(quartic, 4, s), (s - 0.25) * (s - 0.25) * (s - 0.5) * (s - 2.0), 1e-15)
        << s;
  EXPECT_NEAR(poly::value_at_one(kCubic, 3), (0.75) * (0.5) * (-1.0), 1e-15);
  EXPECT_NEAR(poly::slope_at_one(kCubic, 3), 3 - 5.5 + 1.625, 1e-15);
}

TEST(Polynomial, FirstDowncrossingFindsTheCrossingBeforeAndAfterAnInteriorMaximum) {
  // p starts below zero and rises through 1/4 (an upward crossing, not an event) to its maximum
  // near 0.37, then crosses downwards at the root 1/2.
  EXPECT_NEAR(poly::first_downcrossing(kCubic, 3, 0.0, 1e-15), 0.5, 1e-14);
  // -p is positive on [0, 1/4) and crosses downwards at the root 1/4.
  double a[4];
  for (int k = 0; k < 4; ++k) a[k] = -kCubic[k];
  EXPECT_NEAR(poly::first_downcrossing(a, 3, 0.0, 1e-15), 0.25, 1e-14);
  // p + 0.3 rises from 0.05 to its maximum near s = 0.37 (root of p'), then falls through zero
  // between 1/2 and 1 (p(1) + 0.3 = -0.075): the search splits at the maximum. Reference root
  // by bisection on the factored form.
  const double b[4] = {kCubic[0] + 0.3, kCubic[1], kCubic[2], kCubic[3]};
  double lo = 0.5, hi = 1.0;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    ((mid - 0.25) * (mid - 0.5) * (mid - 2.0) + 0.3 > 0 ? lo : hi) = mid;
  }
  EXPECT_NEAR(poly::first_downcrossing(b, 3, 0.0, 1e-15), lo, 1e-14);
}

// A lossy LC tank driven by a constant input: x = [i, v], z = [x; u].
Eigen::MatrixXd tank() {
  Eigen::MatrixXd m = Eigen::MatrixXd::Zero(3, 3);
  m << -2e3, -1e5, 1e5,  //
      2e4, -3.5e2, 0.0,  //
      0.0, 0.0, 0.0;
  return m;
}

// Gauss-Legendre nodes and weights on [0, 1], 8 points (exact for degree 15).
constexpr double kNodes[] = {0.0198550717512319, 0.1016667612931866, 0.2372337950418355,
                             0.4082826787521751, 0.5917173212478249, 0.7627662049581645,
                             0.8983332387068134, 0.9801449282487681};
constexpr double kWeights[] = {0.0506142681451881, 0.1111905172266872, 0.1568533229389436,
                               0.1813418916891810, 0.1813418916891810, 0.1568533229389436,
                               0.1111905172266872, 0.0506142681451881};

TEST(TaylorPiece, TruncatedPieceMatchesTheMatrixExponentialOfTheShorterStepWithFewerTerms) {
  const Eigen::MatrixXd m = tank();
  Eigen::VectorXd z0(3);
  z0 << 0.4, 11.0, 12.0;
  const double h = 3.5e-6, s_end = 0.28;
  TaylorPiece piece(3);
  ASSERT_TRUE(piece.expand(m, z0, h, 2));
  const int full_order = piece.order();
  piece.truncate(s_end);
  // The scaled tail falls below the unit roundoff: the shorter piece keeps fewer terms.
  EXPECT_LT(piece.order(), full_order);
  EXPECT_DOUBLE_EQ(piece.duration_s(), h * s_end);

  Eigen::VectorXd mean(3), end(3), slope(3);
  Eigen::MatrixXd gram(3, 3);
  piece.moments(mean.data(), end.data(), slope.data(), gram.data());
  const double hs = h * s_end;
  const Eigen::VectorXd reference_end = (m * hs).exp() * z0;
  for (int i = 0; i < 3; ++i)
    EXPECT_NEAR(end[i], reference_end[i], 1e-14 * reference_end.lpNorm<Eigen::Infinity>()) << i;
  // dz/ds = h M z at the end.
  const Eigen::VectorXd reference_slope = hs * m * reference_end;
  for (int i = 0; i < 2; ++i)
    EXPECT_NEAR(slope[i], reference_slope[i], 1e-13 * reference_slope.lpNorm<Eigen::Infinity>());
  // Mean and Gram matrix by 8-point Gauss-Legendre on the exponential: the integrand is smooth
  // and the piece spans a small fraction of one oscillation, so the rule is exact to rounding.
  Eigen::VectorXd reference_mean = Eigen::VectorXd::Zero(3);
  Eigen::MatrixXd reference_gram = Eigen::MatrixXd::Zero(3, 3);
  for (int q = 0; q < 8; ++q) {
    const Eigen::VectorXd z = (m * (hs * kNodes[q])).exp() * z0;
    reference_mean += kWeights[q] * z;
    reference_gram += kWeights[q] * z * z.transpose();
  }
  const double scale = z0.lpNorm<Eigen::Infinity>();
  for (int i = 0; i < 3; ++i) {
    EXPECT_NEAR(mean[i], reference_mean[i], 1e-14 * scale) << i;
    for (int j = 0; j < 3; ++j)
      EXPECT_NEAR(gram(i, j), reference_gram(i, j), 1e-14 * scale * scale) << i << "," << j;
  }
}

TEST(TaylorPiece, VariationBoundCoversEveryRowOnTheWholeAndOnTheTruncatedPiece) {
  // Hoelder: |r . (z(s) - z_0)| <= sum_k |r . z_k| <= ||r over the moving block||_1 * bound. The
  // left side is taken from Eigen's matrix exponential at 101 points, the middle from the terms.
  const Eigen::MatrixXd m = tank();
  Eigen::VectorXd z0(3);
  z0 << 0.4, 11.0, 12.0;
  const double h = 3.5e-6;
  TaylorPiece piece(3);
  ASSERT_TRUE(piece.expand(m, z0, h, 2));
  const Eigen::RowVector3d rows[] = {{1.0, 0.0, 0.0}, {0.0, -1.0, 0.3}, {0.7, 0.05, -1.0}};
  for (double s_end : {1.0, 0.28}) {
    if (s_end < 1.0) piece.truncate(s_end);
    const double bound = piece.variation_bound();
    for (const Eigen::RowVector3d& r : rows) {
      const double l1 = r.head(2).cwiseAbs().sum();
      double coefficient_sum = 0.0;
      for (int k = 1; k <= piece.order(); ++k)
        coefficient_sum += std::abs(r * piece.terms().col(k));
      EXPECT_LE(coefficient_sum, l1 * bound * (1 + 1e-15));
      double largest = 0.0;
      for (int q = 0; q <= 100; ++q) {
        const Eigen::VectorXd z = (m * (h * s_end * q / 100.0)).exp() * z0;
        largest = std::max(largest, std::abs(r.dot(z - z0)));
      }
      EXPECT_LE(largest, l1 * bound * (1 + 1e-12));
      // Not vacuous: the bound is within a small factor of the largest excursion.
      EXPECT_LT(l1 * bound, 50 * largest + 1e-300) << s_end;
    }
  }
}

TEST(TaylorPiece, GramEntriesFromAPairListEqualThoseOfTheFullSum) {
  // Four states, one input: a listed subset of the moving block must come out as the full sum
  // gives it (the same products, summed in another order), and the static entries as always.
  Eigen::MatrixXd m = Eigen::MatrixXd::Zero(5, 5);
  m << -2e3, -1e5, 0.0, 0.0, 1e5,   //
      2e4, -3.5e2, -2e4, 0.0, 0.0,  //
      0.0, 5e4, -1e3, -5e4, 0.0,    //
      0.0, 0.0, 1e4, -2e2, 0.0,     //
      0.0, 0.0, 0.0, 0.0, 0.0;
  Eigen::VectorXd z0(5);
  z0 << 0.4, 11.0, -0.2, 10.5, 12.0;
  TaylorPiece piece(5);
  ASSERT_TRUE(piece.expand(m, z0, 2e-6, 4));
  Eigen::VectorXd mean(5), end(5), slope(5);
  Eigen::MatrixXd full(5, 5), listed = Eigen::MatrixXd::Constant(5, 5, -7.0);
  piece.moments(mean.data(), end.data(), slope.data(), full.data());
  const pulsewise::detail::GramPairs pairs = {{0, 0}, {1, 3}, {2, 2}, {0, 3}};
  piece.moments(mean.data(), end.data(), slope.data(), listed.data(), pairs);
  for (const auto& [i, j] : pairs) {
    EXPECT_NEAR(listed(i, j), full(i, j), 1e-15 * full.cwiseAbs().maxCoeff()) << i << "," << j;
    EXPECT_EQ(listed(j, i), listed(i, j));
  }
  EXPECT_EQ(listed(1, 1), -7.0);  // not listed: left as it was
  for (int i = 0; i < 5; ++i) EXPECT_EQ(listed(i, 4), full(i, 4)) << i;
}

}  // namespace
