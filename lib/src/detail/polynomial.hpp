// Scalar polynomials p(s) = sum_k a[k] s^k on the normalised piece time s in [0, 1]. Inside a
// sub-step every signal of the circuit is such a polynomial (the truncated Taylor series of the
// exact solution, accurate to machine precision), so integrals, extrema and crossings are found
// on the polynomial directly.
#pragma once

#include <cmath>

namespace pulsewise::detail::poly {

inline constexpr int kMaxTerms = 41;

// p(s) by Horner's rule split into even and odd powers, p = E(s^2) + s O(s^2) (Estrin's idea
// at its first level): two independent chains of half the length. The searches below evaluate
// the same short polynomial again and again, one iterate after the other, so the latency of the
// chain, not the operation count, sets their speed. Same error bound as Horner's rule on [0, 1]
// to a small constant factor.
inline double eval(const double* a, int order, double s) {
  const double t = s * s;
  int k = order;
  double even = 0.0, odd = 0.0;
  if (k & 1) odd = a[k--];
  for (; k >= 2; k -= 2) {
    even = even * t + a[k];
    odd = odd * t + a[k - 1];
  }
  return (even * t + a[0]) + s * odd;
}

// Coefficients of p': out[k] = (k + 1) a[k + 1], k = 0 .. order - 1. Computed once per search,
// so that each iterate is a plain evaluation.
inline void derivative_coefficients(const double* a, int order, double* out) {
  double weight = 1.0;
  for (int k = 0; k < order; ++k, weight += 1.0) out[k] = weight * a[k + 1];
}

// f and f' at one point (Newton needs both at the same s).
struct ValueSlope {
  double value, slope;
};

// The values at the ends of [0, 1] need no Horner pass: p(0) = a0, p(1) = sum a_k,
// p'(0) = a1, p'(1) = sum k a_k.
inline double value_at_one(const double* a, int order) {
  double v = 0.0;
  for (int k = 0; k <= order; ++k) v += a[k];
  return v;
}
inline double slope_at_one(const double* a, int order) {
  double v = 0.0, weight = 1.0;
  for (int k = 1; k <= order; ++k, weight += 1.0) v += weight * a[k];
  return v;
}

// 1 / (n + 1) for n = 0 .. 2 * kMaxTerms, so that integrals need no divisions.
struct ReciprocalTable {
  double value[2 * kMaxTerms + 1];
  constexpr ReciprocalTable() : value() {
    for (int n = 0; n <= 2 * kMaxTerms; ++n) value[n] = 1.0 / (n + 1);
  }
};
inline constexpr ReciprocalTable kReciprocal{};

// Integral of p(s) q(s) over [0, 1]: sum a_k b_l / (k + l + 1).
inline double product_integral(const double* a, const double* b, int order) {
  double v = 0.0;
  for (int k = 0; k <= order; ++k) {
    const double* w = kReciprocal.value + k;
    double inner = 0.0;
    for (int l = 0; l <= order; ++l) inner += b[l] * w[l];
    v += a[k] * inner;
  }
  return v;
}

// Root of f in [lo, hi] where f(lo) and f(hi) have opposite signs (or one is zero), by Newton's
// method safeguarded with bisection (the bracket always shrinks; a Newton step that leaves it is
// replaced by bisection). Converges quadratically near a simple root. `f(s)` gives f and f' as a
// ValueSlope; f_lo is f(lo). `start` is the first iterate (the midpoint when it is not strictly
// inside the bracket).
template <class F>
double safeguarded_newton(F f, double lo, double f_lo, double hi, double s_tolerance,
                          double start = -1.0) {
  if (f_lo == 0.0) return lo;
  double s = start > lo && start < hi ? start : 0.5 * (lo + hi);
  for (int iter = 0; iter < 100; ++iter) {
    const auto [fs, slope] = f(s);
    if (fs == 0.0) return s;
    if ((fs < 0) == (f_lo < 0)) {
      lo = s;
      f_lo = fs;
    } else {
      hi = s;
    }
    double next = slope != 0.0 ? s - fs / slope : 0.5 * (lo + hi);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (std::abs(next - s) <= s_tolerance || hi - lo <= s_tolerance) return next;
    s = next;
  }
  return s;
}

// The regula falsi point of a bracket: a first iterate that is already close for the nearly
// linear functions of a short piece.
inline double secant_point(double lo, double f_lo, double hi, double f_hi) {
  return f_lo != f_hi ? lo + (hi - lo) * f_lo / (f_lo - f_hi) : 0.5 * (lo + hi);
}

// Root of p in [lo, hi], where p_lo = p(lo); `start` as for safeguarded_newton().
inline double root(const double* a, int order, double lo, double p_lo, double hi,
                   double s_tolerance, double start = -1.0) {
  double slope[kMaxTerms];
  derivative_coefficients(a, order, slope);
  return safeguarded_newton(
      [&](double s) {
        return ValueSlope{eval(a, order, s), order >= 1 ? eval(slope, order - 1, s) : 0.0};
      },
      lo, p_lo, hi, s_tolerance, start);
}

// Root of the derivative (an extremum) in [lo, hi], given a sign change of p' there and
// d_lo = p'(lo); `start` as for safeguarded_newton().
inline double stationary_point(const double* a, int order, double lo, double d_lo, double hi,
                               double s_tolerance, double start = -1.0) {
  double slope[kMaxTerms];
  derivative_coefficients(a, order, slope);
  return root(slope, order - 1, lo, d_lo, hi, s_tolerance, start);
}

// An interior extremum exists (at most one on a piece, see docs/method.md) only where the
// slopes at the two ends have opposite signs.
inline bool slope_changes_sign(double d0, double d1) {
  return (d0 < 0) != (d1 < 0) && d0 != 0.0 && d1 != 0.0;
}

// Location tolerance (in units of the piece) of an interior extremum. Only its value is used,
// and at a stationary point the value's error is second order in the location's: p(s* + e) -
// p(s*) = p''(s*) e^2 / 2. With e <= 1e-9 the value is exact to rounding.
inline constexpr double kExtremumTolerance = 1e-9;

// Value of p at its interior extremum on [0, 1], given the slopes d0 = p'(0) and d1 = p'(1) of
// opposite signs. Only the value is wanted, and it is second order in the location's error, so
// s_tolerance can be far coarser than for an event time.
inline double interior_extremum(const double* a, int order, double d0, double d1,
                                double s_tolerance) {
  return eval(
      a, order,
      stationary_point(a, order, 0.0, d0, 1.0, s_tolerance, secant_point(0.0, d0, 1.0, d1)));
}

// Earliest s in (0, 1] where p crosses from >= 0 to < -noise. Relies on at most one extremum of
// p in [0, 1] (guaranteed in practice by the sub-step bound, see docs/method.md): the interval
// splits at the stationary point into monotone parts, each searched in turn. Returns -1 when p
// does not go below -noise.
inline double first_downcrossing(const double* a, int order, double noise, double s_tolerance) {
  const double p0 = a[0], p1 = value_at_one(a, order);
  const double d0 = order >= 1 ? a[1] : 0.0, d1 = slope_at_one(a, order);
  double split = -1.0;
  if (slope_changes_sign(d0, d1))
    split = stationary_point(a, order, 0.0, d0, 1.0, s_tolerance, secant_point(0.0, d0, 1.0, d1));
  double lo = 0.0, p_lo = p0;
  for (double hi : {split, 1.0}) {
    if (hi <= lo) continue;
    const double p_hi = hi == 1.0 ? p1 : eval(a, order, hi);
    if (p_hi < -noise) {
      if (p_lo <= 0.0) return lo;  // already violated at the start of the monotone part
      return root(a, order, lo, p_lo, hi, s_tolerance, secant_point(lo, p_lo, hi, p_hi));
    }
    lo = hi;
    p_lo = p_hi;
  }
  return -1.0;
}

}  // namespace pulsewise::detail::poly
