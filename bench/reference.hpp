// The high-precision reference of the benchmarks: the hand-written piecewise-linear model of a
// case (cases.hpp) integrated in long double (64-bit mantissa, unit roundoff 5.4e-20).
//
// Method: in each device configuration the model is dx/dt = A x + b; A and b are read off the
// model by evaluating it at 0 and at the unit vectors (exact for an affine function up to
// rounding). Time advances in steps with ||A h||_1 <= max_step_norm, on which the solution is its
// Taylor series x(s) = sum_k c_k s^k, c_{k+1} = A c_k h / (k + 1) (the first coefficient carries
// b), summed until the terms are below 1e-24 of the state. Gate edges are hit exactly: time is
// kept as (period index, offset in the period) so that no precision is lost to large t. Diode
// margins are watched on 8 sub-intervals of every step, with their derivatives so that a
// minimum dipping below zero inside a sub-interval is found too; a crossing is then bisected to
// the resolution of long double. The cycle average of the output is the exact integral of its
// Taylor polynomial. Nothing here is shared with pulsewise.
#pragma once

#include <algorithm>
#include <array>
#include <cmath>
#include <map>
#include <stdexcept>
#include <string>
#include <vector>

#include "cases.hpp"

namespace pwbench {

struct ReferenceOptions {
  long periods = 20000;               // switching periods from the zero state
  long double max_step_norm = 0.25L;  // bound on ||A h||_1 of a Taylor step
};

struct ReferenceResult {
  long double final_average = 0;  // average of the output over the last period
  std::vector<long double> final_state;
  long events = 0;  // diode events located by root finding
  long steps = 0;
};

template <template <class> class Case>
class ReferenceSolver {
 public:
  using T = long double;
  using Model = Case<T>;
  static constexpr int n = Model::kStates;
  using State = std::array<T, n>;

  explicit ReferenceSolver(ReferenceOptions options = {}) : options_(options) {
    period_ = static_cast<T>(1.0 / model_.frequency_hz);
    for (int k = 0; k < Model::kSwitches; ++k) {
      edges_.push_back(model_.gates[k].on);
      double off = model_.gates[k].on + model_.gates[k].width;
      edges_.push_back(off - std::floor(off));
    }
    edges_.push_back(0.0);
    edges_.push_back(1.0);
    std::sort(edges_.begin(), edges_.end());
    edges_.erase(std::unique(edges_.begin(), edges_.end()), edges_.end());
  }

  ReferenceResult run() {
    ReferenceResult result;
    State x{};
    unsigned di = 0;
    for (long p = 0; p < options_.periods; ++p) {
      T integral = 0;
      for (std::size_t e = 0; e + 1 < edges_.size(); ++e) {
        const T a = static_cast<T>(edges_[e]) * period_,
                b = static_cast<T>(edges_[e + 1]) * period_;
        const unsigned sw = switch_pattern_at(model_, 0.5 * (edges_[e] + edges_[e + 1]));
        if (!settle(model_, sw, di, x.data(), kTolerance))
          throw std::runtime_error("settle cycles");
        integral += advance(sw, di, x, b - a, result);
      }
      result.final_average = integral / period_;
    }
    result.final_state.assign(x.begin(), x.end());
    return result;
  }

 private:
  static constexpr T kTolerance = 1e-15L;
  static constexpr int kMaxOrder = 60, kSamples = 8;

  struct Affine {
    std::array<State, n> a;  // columns of A
    State b;
    T norm = 0;  // ||A||_1
  };

  const Affine& affine(unsigned sw, unsigned di) {
    const unsigned key = sw | (di << 16);
    auto it = cache_.find(key);
    if (it != cache_.end()) return it->second;
    Affine f;
    State zero{};
    model_.derivative(sw, di, zero.data(), f.b.data());
    for (int j = 0; j < n; ++j) {
      State e{}, dx{};
      e[j] = 1;
      model_.derivative(sw, di, e.data(), dx.data());
      T column = 0;
      for (int i = 0; i < n; ++i) {
        f.a[j][i] = dx[i] - f.b[i];
        column += std::abs(f.a[j][i]);
      }
      f.norm = std::max(f.norm, column);
    }
    return cache_.emplace(key, f).first->second;
  }

  // Taylor coefficients of x(s h), s in [0, 1].
  int expand(const Affine& f, const State& x0, T h, std::vector<State>& c) const {
    c.assign(1, x0);
    T scale = 1;
    for (int i = 0; i < n; ++i) scale = std::max(scale, std::abs(x0[i]));
    State next{};
    for (int i = 0; i < n; ++i) next[i] = f.b[i] * h;
    for (int k = 1; k <= kMaxOrder; ++k) {
      const State& prev = c.back();
      for (int j = 0; j < n; ++j)
        for (int i = 0; i < n; ++i) next[i] += f.a[j][i] * prev[j] * h;
      T size = 0;
      for (int i = 0; i < n; ++i) {
        next[i] /= k;
        size = std::max(size, std::abs(next[i]));
      }
      c.push_back(next);
      next.fill(0);
      if (size < 1e-24L * scale && k > 2) return k;
    }
    throw std::runtime_error("reference Taylor series did not converge");
  }

  static State eval(const std::vector<State>& c, T s) {
    State x = c.back();
    for (int k = static_cast<int>(c.size()) - 2; k >= 0; --k)
      for (int i = 0; i < n; ++i) x[i] = x[i] * s + c[k][i];
    return x;
  }

  // Polynomial coefficients of margin d along the step. The margin is affine in x within one
  // configuration, so coefficient k is margin(c0 + ck) - margin(c0); c0 + ck keeps the cutset
  // current of a cutset configuration at zero, where the margin formula is the finite one.
  void margin_polynomial(unsigned sw, unsigned di, int d, const std::vector<State>& c,
                         std::vector<T>& g) const {
    g.resize(c.size());
    g[0] = model_.diode_margin(sw, di, d, c[0].data());
    for (std::size_t k = 1; k < c.size(); ++k) {
      State y = c[0];
      for (int i = 0; i < n; ++i) y[i] += c[k][i];
      g[k] = model_.diode_margin(sw, di, d, y.data()) - g[0];
    }
  }
  static T value(const std::vector<T>& g, T s) {
    T v = g.back();
    for (int k = static_cast<int>(g.size()) - 2; k >= 0; --k) v = v * s + g[k];
    return v;
  }
  static T derivative(const std::vector<T>& g, T s) {
    T v = 0;
    for (int k = static_cast<int>(g.size()) - 1; k >= 1; --k) v = v * s + k * g[k];
    return v;
  }

  // First s in [0, 1] where the margin polynomial g falls below -kTolerance, or -1. A margin at
  // zero and falling at s = 0 is an event at once.
  static T first_crossing(const std::vector<T>& g) {
    T s0 = 0, d0 = derivative(g, 0);
    if (g[0] <= 0 && d0 < 0) return 0;
    for (int j = 1; j <= kSamples; ++j) {
      const T s1 = T(j) / kSamples;
      const T g1 = value(g, s1), d1 = derivative(g, s1);
      T lo = s0, hi = -1;
      if (g1 < -kTolerance) {
        hi = s1;
      } else if (d0 < 0 && d1 > 0) {
        T a = s0, b = s1;  // a minimum inside: bisect the slope, then look at its value
        for (int it = 0; it < 70; ++it) {
          const T m = (a + b) / 2;
          (derivative(g, m) < 0 ? a : b) = m;
        }
        if (value(g, a) < -kTolerance) hi = a;
      }
      if (hi >= 0) {
        for (int it = 0; it < 80 && hi - lo > 1e-21L; ++it) {
          const T m = (lo + hi) / 2;
          (value(g, m) < 0 ? hi : lo) = m;
        }
        return hi;
      }
      s0 = s1;
      d0 = d1;
    }
    return -1;
  }

  // Advances x by duration in the fixed switch pattern sw, handling diode events. Returns the
  // integral of the output.
  T advance(unsigned sw, unsigned& di, State& x, T duration, ReferenceResult& result) {
    T done = 0, integral = 0;
    int events_here = 0;
    while (duration - done > 0) {
      const Affine& f = affine(sw, di);
      T h = duration - done;
      if (f.norm * h > options_.max_step_norm) h = options_.max_step_norm / f.norm;
      expand(f, x, h, coefficients_);
      ++result.steps;
      T s_end = 1;
      int which = -1;
      for (int d = 0; d < Model::kDiodes; ++d) {
        margin_polynomial(sw, di, d, coefficients_, margin_);
        const T s = first_crossing(margin_);
        if (s >= 0 && (which < 0 || s < s_end)) {
          s_end = s;
          which = d;
        }
      }
      T power = s_end;
      for (int k = 0; k < static_cast<int>(coefficients_.size()); ++k, power *= s_end)
        integral += coefficients_[k][Model::kOutput] * h * power / (k + 1);
      x = eval(coefficients_, s_end);
      const bool last = which < 0 && h == duration - done;
      done = last ? duration : done + s_end * h;
      if (which >= 0) {
        if (++events_here > 64) throw std::runtime_error("reference: diode events chatter");
        ++result.events;
        di ^= 1u << which;
        if (!settle(model_, sw, di, x.data(), kTolerance))
          throw std::runtime_error("reference: settle cycles");
      }
    }
    return integral;
  }

  ReferenceOptions options_;
  Model model_;
  T period_ = 0;
  std::vector<double> edges_;
  std::map<unsigned, Affine> cache_;
  std::vector<State> coefficients_;
  std::vector<T> margin_;
};

}  // namespace pwbench
