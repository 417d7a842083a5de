// A synthetic feed for recorder tests: it plays the role of the cycle loop, handing an Observer
// pieces, events and cycle metrics of a converter-like run whose waveforms are known functions of
// time, so that what a recorder stores can be checked against closed forms.
//
// Per switching period T (index k, local time tau = t - k T), with the switch on for D T:
//   out.v = v_dc + v_ac sin(2 pi t / T)                          smooth
//   L1.i  = triangle from i_min up to i_max over D T, back down   continuous, piecewise linear
//   S1.i  = L1.i while the switch is on, 0 while it is off        jumps at both switch edges
#pragma once

#include <cmath>
#include <functional>
#include <numbers>
#include <span>
#include <vector>

#include "pulsewise/observer.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise::testing {

inline constexpr DevicePattern kSwitchOn = 0b01;  // S1 on, D1 off
inline constexpr DevicePattern kDiodeOn = 0b10;   // S1 off, D1 on

struct SyntheticConverter {
  double period_s = 10e-6;
  double duty = 0.3;
  double v_dc = 12.0;
  double v_ac = 0.25;
  double i_min = 1.0;
  double i_max = 3.0;
  double start_s = 0.0;
  int pieces_per_interval = 2;  // each interval is split, as the engine splits at sub-steps

  static std::vector<SignalInfo> signals() {
    return {{"out.v", SignalQuantity::kVoltage, -1},
            {"L1.i", SignalQuantity::kCurrent, 1},
            {"S1.i", SignalQuantity::kCurrent, 2}};
  }

  double period_start(long k) const { return start_s + static_cast<double>(k) * period_s; }

  // The signals at t, evaluated with the formulas of period k in the given interval.
  void values(long k, bool on, double t, std::span<double> out) const {
    const double tau = t - period_start(k);
    const double rise = (i_max - i_min) / (duty * period_s);
    const double fall = (i_max - i_min) / ((1.0 - duty) * period_s);
    const double current = on ? i_min + rise * tau : i_max - fall * (tau - duty * period_s);
    out[0] = v_dc + v_ac * std::sin(2.0 * std::numbers::pi * (t - start_s) / period_s);
    out[1] = current;
    out[2] = on ? current : 0.0;
  }

  // Just before (left) or just after (right) t, for any t inside the run.
  std::vector<double> limit(double t, bool right) const {
    double position = (t - start_s) / period_s;
    long k = static_cast<long>(std::floor(position));
    double tau = position - static_cast<double>(k);
    // Snap to the period edge when t is an edge within rounding.
    if (std::abs(tau - 1.0) < 1e-9) ++k, tau = 0.0;
    if (std::abs(tau) < 1e-9 && !right) --k, tau = 1.0;
    bool on = tau < duty || (std::abs(tau - duty) < 1e-9 && !right);
    if (std::abs(tau - duty) < 1e-9 && right) on = false;
    std::vector<double> out(3);
    values(k, on, t, out);
    return out;
  }

  // Exact per-cycle metrics: averages and RMS of a sine over whole periods and of triangular and
  // trapezoidal pulses (Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed.,
  // Appendix A: triangular ripple Irms^2 = I0^2 + (dI)^2/12; pulse of duty D from I1 to I2:
  // Irms^2 = D (I1^2 + I1 I2 + I2^2) / 3).
  CycleMetrics cycle(long k) const {
    CycleMetrics c;
    c.index = k;
    c.start_time_s = period_start(k);
    c.mode = ConductionMode::kCcm;
    c.intervals = {{kSwitchOn, duty}, {kDiodeOn, 1.0 - duty}};
    const double mean = 0.5 * (i_min + i_max);
    const double ripple = i_max - i_min;
    c.signals = {
        {v_dc, std::sqrt(v_dc * v_dc + 0.5 * v_ac * v_ac), v_dc - v_ac, v_dc + v_ac},
        {mean, std::sqrt(mean * mean + ripple * ripple / 12.0), i_min, i_max},
        {duty * mean, std::sqrt(duty * (i_min * i_min + i_min * i_max + i_max * i_max) / 3.0), 0.0,
         i_max}};
    c.events = 3;
    // Markers that identify the row in round trips.
    c.energy_in_j = 1e-6 * static_cast<double>(k + 1);
    c.stored_energy_change_j = -1e-9 * static_cast<double>(k);
    c.dissipated_j = 0.5e-6 * static_cast<double>(k + 1);
    c.state_change = 1.0 / static_cast<double>(k + 1);
    return c;
  }

  std::vector<EventRecord> events(long k) const {
    const double t0 = period_start(k);
    const double t_off = t0 + duty * period_s;
    return {{t0, EventKind::kGateEdge, 2, "S1", kSwitchOn},
            {t_off, EventKind::kGateEdge, 2, "S1", 0},
            {t_off, EventKind::kForcedTurnOn, 3, "D1", kDiodeOn}};
  }

  RunInfo run_info(long periods) const {
    return RunInfo{signals(), period_s, start_s, start_s + static_cast<double>(periods) * period_s,
                   periods};
  }

  RunSummary summary(long periods) const {
    RunSummary s;
    s.end = RunEnd::kCompleted;
    s.message = "synthetic run";
    s.cycles = periods;
    s.events = 3 * periods;
    s.configurations_built = 2;
    s.cache_hits = static_cast<std::size_t>(2 * periods - 2);
    s.end_time_s = period_start(periods);
    s.recorded = signals();
    s.last_cycle = cycle(periods - 1);
    s.startup.inductors = {"L1"};
    s.startup.peak_inductor_current_a = {i_max};
    s.final_state = Eigen::VectorXd::Constant(2, i_min);
    s.state_names = {"L1.i", "C1.v"};
    return s;
  }

  // Plays `periods` periods into the observer; `after_cycle(k)` runs after each on_cycle.
  void feed(Observer& observer, long periods, bool finish = true,
            const std::function<void(long)>& after_cycle = {}) const {
    observer.on_start(run_info(periods));
    for (long k = 0; k < periods; ++k) {
      const std::vector<EventRecord> edges = events(k);
      observer.on_event(edges[0]);
      play_interval(observer, k, true, period_start(k), edges[1].time_s);
      observer.on_event(edges[1]);
      observer.on_event(edges[2]);
      play_interval(observer, k, false, edges[1].time_s, period_start(k + 1));
      observer.on_cycle(cycle(k));
      if (after_cycle) after_cycle(k);
    }
    if (finish) observer.on_finish(summary(periods));
  }

 private:
  class Piece : public PieceView {
   public:
    Piece(const SyntheticConverter& c, long k, bool on, double t0, double t1)
        : c_(c), k_(k), on_(on), t0_(t0), t1_(t1) {}
    double t_begin() const override { return t0_; }
    double t_end() const override { return t1_; }
    DevicePattern pattern() const override { return on_ ? kSwitchOn : kDiodeOn; }
    void recorded_values_at(double t, std::span<double> out) const override {
      c_.values(k_, on_, t, out);
    }

   private:
    const SyntheticConverter& c_;
    long k_;
    bool on_;
    double t0_, t1_;
  };

  void play_interval(Observer& observer, long k, bool on, double t0, double t1) const {
    for (int p = 0; p < pieces_per_interval; ++p) {
      const double a = t0 + (t1 - t0) * p / pieces_per_interval;
      const double b =
          p + 1 == pieces_per_interval ? t1 : t0 + (t1 - t0) * (p + 1) / pieces_per_interval;
      observer.on_piece(Piece(*this, k, on, a, b));
    }
  }
};

}  // namespace pulsewise::testing
