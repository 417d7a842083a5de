// Probe of a fixed-size period kernel (issue 2, speed of computed periods): case 1's period
// computed with the engine's own algorithms, but with every size fixed at compile time and each
// configuration's data in flat arrays, side by side in one run with the engine and with the
// engine's small-block kernel off (SimulationOptions::small_block_kernel).
//
// It answers one question: how much of the engine's cost per computed period is in its
// algorithms and how much in their general-purpose setting (docs/performance.md, sixth and
// seventh rounds)? The algorithms are the engine's: the Taylor series of exp(M h) z0 with the
// stopping test of Al-Mohy and Higham (SIAM J. Sci. Comput. 33(2), 2011), the diode's turn-off
// found by safeguarded Newton on the current's polynomial, the piece truncated at the event with
// its tail trimmed, and the mean, end value, end slope and Gram matrix of each piece for the
// average, RMS, extremes and energies. What it leaves out, and a general kernel must still do:
// the consistency search after an event, the gate bank, the event log, the configuration
// intervals, the per-element energies, the sub-step bound and the start-up figures. It knows the
// three configurations of case 1 and is not a simulator; it is a measure of what a lean kernel
// could reach. It prints the largest difference between its last period and the engine's, which
// shows it did the whole work.
//
//   bench_kernel_probe [periods]     default 20 000, from rest, as the benchmark
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <limits>
#include <string>

#include "cases.hpp"
#include "detail/polynomial.hpp"  // the engine's event and extremum searches
#include "pulsewise/circuit_file.hpp"
#include "pulsewise/simulation.hpp"
#include "reference.hpp"

#ifndef PWBENCH_DATA_DIR
#error "PWBENCH_DATA_DIR must name bench/data"
#endif

namespace {

// Every step of the kernel but the interior extremum is forced inline into the period loop.
// With the steps as separate calls on a Piece passed by reference, the same work took twice the
// instructions (callgrind, about 4 400 against 2 150 per period) and ran at half the speed. The
// interior extremum stays out of line: inlined too, it brought the loop back to the slow speed
// (the code generation of the loop, not the work, changes). The engine's steps are separate calls
// (TaylorPiece, accumulate_piece).
constexpr int kMoving = 2;     // moving block: inductor current, capacitor voltage
constexpr int kAugmented = 3;  // z = [i_L, v_C, V_in]
constexpr int kMaxOrder = 30;
constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;
constexpr double kInfinity = std::numeric_limits<double>::infinity();

struct Reciprocals {
  std::array<double, 2 * kMaxOrder + 2> value{};
  Reciprocals() {
    for (std::size_t k = 0; k < value.size(); ++k) value[k] = 1.0 / static_cast<double>(k + 1);
  }
};
const Reciprocals kReciprocal;

// One configuration: the moving rows of dz/dt = M z.
struct Configuration {
  std::array<std::array<double, kAugmented>, kMoving> m{};
};

struct Piece {
  std::array<std::array<double, kMoving>, kMaxOrder + 1> terms{};  // terms[k] = z_k
  std::array<double, kAugmented> start{};
  int order = 0;
  double variation = 0.0;  // sum over k >= 1 of max |z_k|
  double h = 0.0;
};

[[gnu::always_inline]] inline double max_abs(const std::array<double, kAugmented>& z) {
  return std::max({std::abs(z[0]), std::abs(z[1]), std::abs(z[2])});
}

// z_k = (h / k) M z_{k-1}, summed until two consecutive terms fall below the unit roundoff.
[[gnu::always_inline]] inline bool expand(const Configuration& c,
                                          const std::array<double, kAugmented>& z0, double h,
                                          Piece& p) {
  p.start = z0;
  p.h = h;
  p.terms[0] = {z0[0], z0[1]};
  double sum = max_abs(z0), previous = sum;
  p.variation = 0.0;
  double a0 = 0.0, a1 = 0.0;
  for (int k = 1; k <= kMaxOrder; ++k) {
    double o0 = 0.0, o1 = 0.0;
    if (k == 1) {
      for (int j = 0; j < kAugmented; ++j) {
        o0 += c.m[0][j] * z0[j];
        o1 += c.m[1][j] * z0[j];
      }
    } else {
      o0 = c.m[0][0] * a0 + c.m[0][1] * a1;
      o1 = c.m[1][0] * a0 + c.m[1][1] * a1;
    }
    const double scale = h * kReciprocal.value[k - 1];
    a0 = scale * o0;
    a1 = scale * o1;
    p.terms[k] = {a0, a1};
    const double term = std::max(std::abs(a0), std::abs(a1));
    sum = std::max(sum, term);
    p.variation += term;
    if (term + previous <= kUnitRoundoff * sum) {
      p.order = k;
      return true;
    }
    previous = term;
  }
  return false;
}

// Restrict the piece to [0, s_end], renormalised to [0, 1], and drop the tail the shorter piece
// no longer needs (the stopping test of expand, from the top down).
[[gnu::always_inline]] inline void truncate(Piece& p, double s_end) {
  std::array<double, kMaxOrder + 1> norms{};
  double sum = max_abs(p.start), scale = s_end;
  norms[0] = sum;
  for (int k = 1; k <= p.order; ++k) {
    p.terms[k][0] *= scale;
    p.terms[k][1] *= scale;
    norms[k] = std::max(std::abs(p.terms[k][0]), std::abs(p.terms[k][1]));
    sum = std::max(sum, norms[k]);
    scale *= s_end;
  }
  while (p.order >= 2 && norms[p.order] + norms[p.order - 1] <= kUnitRoundoff * sum) --p.order;
  p.h *= s_end;
}

// Mean, end value and end slope of each moving entry, and the Gram block
// G = sum_{k,l} z_k z_l^T / (k + l + 1) by its half sum H + H^T (as TaylorPiece::moments).
struct Moments {
  std::array<double, kMoving> mean{}, end{}, end_slope{};
  double g00 = 0.0, g01 = 0.0, g11 = 0.0;
};

[[gnu::always_inline]] inline Moments moments(const Piece& p) {
  Moments m;
  const double* w = kReciprocal.value.data();
  double h00 = 0.0, h01 = 0.0, h10 = 0.0, h11 = 0.0;
  for (int k = 0; k <= p.order; ++k) {
    const double z0 = p.terms[k][0], z1 = p.terms[k][1];
    m.mean[0] += w[k] * z0;
    m.mean[1] += w[k] * z1;
    m.end[0] += z0;
    m.end[1] += z1;
    m.end_slope[0] += k * z0;
    m.end_slope[1] += k * z1;
    double y0 = 0.5 * w[2 * k] * z0, y1 = 0.5 * w[2 * k] * z1;
    for (int l = k + 1; l <= p.order; ++l) {
      y0 += w[k + l] * p.terms[l][0];
      y1 += w[k + l] * p.terms[l][1];
    }
    h00 += z0 * y0;
    h01 += z0 * y1;
    h10 += z1 * y0;
    h11 += z1 * y1;
  }
  m.g00 = 2.0 * h00;
  m.g11 = 2.0 * h11;
  m.g01 = h01 + h10;
  return m;
}

// Per-period integrals and extremes of the two recorded signals (i_L, v_C) and the energies.
struct PeriodSums {
  std::array<double, kMoving> integral{}, square_integral{};
  std::array<double, kMoving> min{kInfinity, kInfinity}, max{-kInfinity, -kInfinity};
  double energy_in = 0.0, dissipated = 0.0;
};

// The engine's search (poly::interior_extremum) on the entry's polynomial. Kept out of line:
// inlined, it brought the period loop back to the slow speed (see the note at the top).
[[gnu::noinline]] double interior_extremum(const Piece& p, int j, double d0, double d1) {
  std::array<double, kMaxOrder + 1> a{};
  for (int k = 0; k <= p.order; ++k) a[k] = p.terms[k][j];
  return pulsewise::detail::poly::interior_extremum(a.data(), p.order, d0, d1, 1e-9);
}

[[gnu::always_inline]] inline void accumulate(const Piece& p, const Moments& m,
                                              double series_resistance_ohm, double vin,
                                              double load_ohm, PeriodSums& sums) {
  const std::array<double, kMoving> squares{m.g00, m.g11};
  for (int j = 0; j < kMoving; ++j) {
    sums.integral[j] += p.h * m.mean[j];
    sums.square_integral[j] += p.h * squares[j];
    double lo = std::min(p.terms[0][j], m.end[j]), hi = std::max(p.terms[0][j], m.end[j]);
    const double d0 = p.terms[1][j], d1 = m.end_slope[j];
    if ((d0 < 0) != (d1 < 0) && d0 != 0 && d1 != 0) {
      const double v = interior_extremum(p, j, d0, d1);
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
    sums.min[j] = std::min(sums.min[j], lo);
    sums.max[j] = std::max(sums.max[j], hi);
  }
  sums.energy_in += p.h * vin * m.mean[0];
  sums.dissipated += p.h * (series_resistance_ohm * m.g00 + m.g11 / load_ohm);
}

// Everything the last period gave. Every sum must be read after the run: a figure the program
// never reads is work the compiler may drop, and an earlier version of this probe, which read
// only the average, was timed without its Gram blocks, extremes and energies.
struct ProbeResult {
  double final_average_v = 0.0;
  PeriodSums last;
  long events = 0;
};

// Case 1 from rest: on for D T (switch closed), then the diode until its current reaches zero,
// then idle (both open, inductor current held at zero) until the period ends.
ProbeResult run_probe(const pwbench::DcmBoost<double>& b, long periods) {
  const double period_s = 1.0 / b.frequency_hz,
               on_s = b.gates[0].width * period_s;  // gate on at t = 0
  const double time_resolution = 1e-14 * period_s;
  Configuration on, diode, idle;
  on.m = {{{-b.rs / b.l, 0.0, 1.0 / b.l}, {0.0, -1.0 / (b.r * b.c), 0.0}}};
  diode.m = {{{-b.rd / b.l, -1.0 / b.l, 1.0 / b.l}, {1.0 / b.c, -1.0 / (b.r * b.c), 0.0}}};
  idle.m = {{{0.0, 0.0, 0.0}, {0.0, -1.0 / (b.r * b.c), 0.0}}};
  std::array<double, kAugmented> z{0.0, 0.0, b.vin};
  Piece p;
  ProbeResult result;
  for (long k = 0; k < periods; ++k) {
    PeriodSums sums;
    if (!expand(on, z, on_s, p)) std::abort();
    // The open diode stays reverse-biased (its voltage -v_C(s) <= 0), proved as the engine
    // does: first by the norm bound of the series, then by the sum of the polynomial's
    // coefficients. Case 1 never needs the crossing search here.
    if (z[1] - p.variation <= 0.0) {
      double variation = 0.0;
      for (int q = 1; q <= p.order; ++q) variation += std::abs(p.terms[q][1]);
      if (z[1] - variation < -1e-9 * b.vin) std::abort();
    }
    Moments m = moments(p);
    accumulate(p, m, b.rs, b.vin, b.r, sums);
    z = {m.end[0], m.end[1], b.vin};
    double tau = on_s;
    if (z[0] > 0.0) {
      if (!expand(diode, z, period_s - tau, p)) std::abort();
      std::array<double, kMaxOrder + 1> current{};
      for (int q = 0; q <= p.order; ++q) current[q] = p.terms[q][0];
      const double full = p.h;
      const double s = pulsewise::detail::poly::first_downcrossing(current.data(), p.order, 0.0,
                                                                   time_resolution / full);
      if (s >= 0.0) truncate(p, s);
      m = moments(p);
      accumulate(p, m, b.rd, b.vin, b.r, sums);
      z = {s >= 0.0 ? 0.0 : m.end[0], m.end[1], b.vin};
      tau += s >= 0.0 ? s * full : full;
      result.events += s >= 0.0;
    }
    if (period_s - tau > time_resolution) {
      if (!expand(idle, z, period_s - tau, p)) std::abort();
      m = moments(p);
      accumulate(p, m, 0.0, b.vin, b.r, sums);
      z[1] = m.end[1];
    }
    result.final_average_v = sums.integral[1] / period_s;
    result.last = sums;
  }
  return result;
}

double cpu_seconds() {
  timespec t{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

template <class F>
double best_seconds(int repetitions, F&& f) {
  double best = std::numeric_limits<double>::infinity();
  for (int r = 0; r < repetitions; ++r) {
    const double t0 = cpu_seconds();
    f();
    best = std::min(best, cpu_seconds() - t0);
  }
  return best;
}

}  // namespace

int main(int argc, char** argv) {
  const long periods = argc > 1 ? std::atol(argv[1]) : 20000;
  if (periods <= 0) {
    std::fprintf(stderr, "bench_kernel_probe: the number of periods must be positive\n");
    return 2;
  }
  constexpr int kRepetitions = 9;
  const pwbench::DcmBoost<double> boost;
  ProbeResult probe;
  const double probe_s = best_seconds(kRepetitions, [&] { probe = run_probe(boost, periods); });

  pulsewise::CircuitFile file =
      pulsewise::load_circuit_file(std::string(PWBENCH_DATA_DIR) + "/case1-dcm-boost.toml");
  file.simulation.periods = periods;
  file.simulation.repeat_recurring_periods = false;  // every period computed
  pulsewise::RunSummary summary;
  const double engine_s = best_seconds(kRepetitions, [&] {
    pulsewise::Simulation simulation(file.circuit, file.simulation);
    summary = simulation.run();
  });
  // The engine again with its general piece code only (the small-block kernel off): the
  // kernel's gain in the same run. Results are identical to the bit.
  file.simulation.small_block_kernel = false;
  pulsewise::RunSummary general_summary;
  const double general_s = best_seconds(kRepetitions, [&] {
    pulsewise::Simulation simulation(file.circuit, file.simulation);
    general_summary = simulation.run();
  });
  const bool identical =
      general_summary.last_cycle.signals[0].rms == summary.last_cycle.signals[0].rms &&
      general_summary.last_cycle.signals[1].max == summary.last_cycle.signals[1].max &&
      general_summary.last_cycle.energy_in_j == summary.last_cycle.energy_in_j;
  double engine_average = NAN;
  for (std::size_t k = 0; k < summary.recorded.size(); ++k)
    if (summary.recorded[k].name == file.simulation.output_signal)
      engine_average = summary.last_cycle.signals[k].average;

  // The probe's last period against the engine's (recorded signals: out.v, then L1.i): the
  // largest difference over the averages, RMS values and extremes of both signals (relative to
  // the signal's largest magnitude, as an extreme can be zero) and the energy delivered and
  // dissipated (relative to each).
  const double period_s = 1.0 / boost.frequency_hz;
  double largest_difference = 0.0;
  const auto compare = [&](double probe_value, double engine_value, double scale) {
    largest_difference =
        std::max(largest_difference, std::fabs(probe_value - engine_value) / scale);
  };
  for (int j = 0; j < 2; ++j) {
    const pulsewise::SignalStats& e = summary.last_cycle.signals[1 - j];  // probe: i_L, v_C
    const double scale = std::max(std::fabs(e.min), std::fabs(e.max));
    compare(probe.last.integral[j] / period_s, e.average, scale);
    compare(std::sqrt(probe.last.square_integral[j] / period_s), e.rms, scale);
    compare(probe.last.min[j], e.min, scale);
    compare(probe.last.max[j], e.max, scale);
  }
  compare(probe.last.energy_in, summary.last_cycle.energy_in_j,
          std::fabs(summary.last_cycle.energy_in_j));
  compare(probe.last.dissipated, summary.last_cycle.dissipated_j,
          std::fabs(summary.last_cycle.dissipated_j));

  const long double reference =
      pwbench::ReferenceSolver<pwbench::DcmBoost>({periods, 0.5L}).run().final_average;
  const auto error = [&](double v) {
    return static_cast<double>(std::fabs(static_cast<long double>(v) - reference) /
                               std::fabs(reference));
  };
  std::printf(
      "{\"periods\": %ld, \"probe_periods_per_s\": %.4g, \"engine_periods_per_s\": %.4g, "
      "\"general_engine_periods_per_s\": %.4g, \"kernel_over_general\": %.3f, "
      "\"kernel_identical_to_general\": %s, \"probe_over_engine\": %.3f, \"probe_rel_error\": "
      "%.2e, \"engine_rel_error\": %.2e, "
      "\"probe_events\": %ld, \"engine_events\": %ld, \"last_period_largest_difference\": %.2e}\n",
      periods, static_cast<double>(periods) / probe_s, static_cast<double>(periods) / engine_s,
      static_cast<double>(periods) / general_s, general_s / engine_s, identical ? "true" : "false",
      engine_s / probe_s, error(probe.final_average_v), error(engine_average), probe.events,
      static_cast<long>(summary.events), largest_difference);
  return 0;
}
