#include "detail/gate_bank.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace pulsewise::detail {

namespace {
constexpr double kNever = std::numeric_limits<double>::infinity();
}  // namespace

// t plus the resolution, never less than a few units in the last place of t: late in a long run
// the fixed resolution falls below the spacing of doubles and would round away.
double GateBank::just_after(double t) const {
  return t + std::max(resolution_s_, 4 * (std::nextafter(t, kNever) - t));
}

GateBank::GateBank(const Circuit& circuit, const std::vector<int>& devices,
                   double time_resolution_s, double run_period_s)
    : resolution_s_(time_resolution_s), run_period_s_(run_period_s) {
  for (const auto& m : circuit.pwm_modulators())
    gates_.push_back({m.name, Kind::kPwm, 1.0 / m.frequency_hz, m.duty_cycle, m.phase, 0.0,
                      m.soft_start, nullptr});
  for (const auto& m : circuit.complementary_modulators()) {
    for (Kind kind : {Kind::kHigh, Kind::kLow})
      gates_.push_back({m.name + (kind == Kind::kHigh ? ".high" : ".low"), kind,
                        1.0 / m.frequency_hz, m.duty_cycle, m.phase, m.dead_time_s, m.soft_start,
                        nullptr});
  }
  for (const auto& s : circuit.gate_schedules())
    gates_.push_back({s.name, Kind::kSchedule, 0, 0, 0, 0, {}, &s});
  for (std::size_t bit = 0; bit < devices.size(); ++bit) {
    const Element& e = circuit.elements()[devices[bit]];
    if (e.kind != ElementKind::kSwitch) continue;
    for (std::size_t g = 0; g < gates_.size(); ++g) {
      if (gates_[g].name == e.gate) switch_gate_.emplace_back(bit, g);
    }
    switch_mask_ |= DevicePattern{1} << bit;
  }
  // Edges inside a run period can belong to the gate period before it (phase shifts), so the
  // offsets repeat from one period after the longest duty ramp. A schedule holds its state
  // between its changes, so it only breaks the periods around each change.
  if (!(run_period_s_ > 0)) return;
  periodic_from_ = 0;
  for (const auto& [bit, gate] : switch_gate_) {
    const Gate& g = gates_[gate];
    if (g.kind == Kind::kSchedule) {
      for (const auto& change : g.schedule->changes)
        change_periods_.push_back(run_period_of(change.first, run_period_s_));
      continue;
    }
    if (g.period_s != run_period_s_) {
      periodic_from_ = -1;
      break;
    }
    periodic_from_ = std::max(periodic_from_, g.soft_start.periods + 1);
  }
  std::sort(change_periods_.begin(), change_periods_.end());
}

long run_period_of(double t_s, double run_period_s) {
  return static_cast<long>(std::floor(std::max(t_s, 0.0) / run_period_s));
}

long quiet_stretch_end(const std::vector<long>& change_periods, long period_index) {
  // The first change in period_index - 1 or later: inside the margin, or the stretch's end.
  const auto next =
      std::lower_bound(change_periods.begin(), change_periods.end(), period_index - 1);
  if (next == change_periods.end()) return kForever;
  return *next <= period_index + 1 ? -1 : *next - 2;
}

long GateBank::quiet_until(long period_index) const {
  if (periodic_from_ < 0 || period_index < periodic_from_) return -1;
  return quiet_stretch_end(change_periods_, period_index);
}

double GateBank::next_edge_in_period(long period_index, long double origin, double tau) const {
  if (!offsets_hold(period_index) && !find_periodic_offsets(period_index, origin))
    return next_edge_after(origin, tau);
  const double slack = std::max<double>(resolution_s_, 8 * std::abs(origin + tau) * 1e-19L);
  for (double e : periodic_offsets_)
    if (e > tau + slack) return e;
  return kNever;
}

bool GateBank::find_periodic_offsets(long period_index, long double origin) const {
  const long end = quiet_until(period_index);
  if (end < 0) return false;
  offsets_begin_ = period_index;
  offsets_end_ = end;
  periodic_offsets_.clear();
  periodic_patterns_.clear();
  for (double x = 0.0;;) {
    const double e = next_edge_after(origin, x);
    if (!(e < run_period_s_ - resolution_s_)) break;
    periodic_offsets_.push_back(e);
    periodic_patterns_.push_back(switch_pattern(static_cast<double>(origin + e)));
    x = e;
  }
  periodic_start_pattern_ = switch_pattern(static_cast<double>(origin));
  return true;
}

DevicePattern GateBank::switch_pattern_in_period(long period_index, long double origin,
                                                 double tau) const {
  const double t = static_cast<double>(origin + tau);
  if (!offsets_hold(period_index) && !find_periodic_offsets(period_index, origin))
    return switch_pattern(t);
  if (tau == run_period_s_) return periodic_start_pattern_;  // the next period's start
  for (std::size_t i = 0; i < periodic_offsets_.size(); ++i)
    if (periodic_offsets_[i] == tau) return periodic_patterns_[i];
  return switch_pattern(t);  // a source breakpoint between the edges
}

double GateBank::duty_of_period(const Gate& g, long k) const {
  const SoftStart& s = g.soft_start;
  if (s.periods <= 0) return g.duty;
  const double progress = std::clamp(static_cast<double>(std::max(k, 0L)) / s.periods, 0.0, 1.0);
  return s.initial_duty + (g.duty - s.initial_duty) * progress;
}

// On-interval of period k, relative to its start, for each kind of gate.
bool GateBank::on(const Gate& g, double t) const {
  const double tp = just_after(t);
  if (g.kind == Kind::kSchedule) {
    bool state = g.schedule->initial_on;
    for (const auto& [time, value] : g.schedule->changes) {
      if (time > tp) break;
      state = value;
    }
    return state;
  }
  const long k = static_cast<long>(std::floor(tp / g.period_s - g.phase));
  const double start = (k + g.phase) * g.period_s;
  const double tau = tp - start;
  const double d = duty_of_period(g, k);
  switch (g.kind) {
    case Kind::kPwm:
    case Kind::kHigh: return tau < d * g.period_s;
    case Kind::kLow:
      return tau >= d * g.period_s + g.dead_time_s && tau < g.period_s - g.dead_time_s;
    case Kind::kSchedule: break;
  }
  return false;
}

long double GateBank::next_edge(const Gate& g, long double t) const {
  const long double tp = t + std::max<long double>(resolution_s_, 8 * std::abs(t) * 1e-19L);
  constexpr long double kNeverL = std::numeric_limits<long double>::infinity();
  if (g.kind == Kind::kSchedule) {
    for (const auto& change : g.schedule->changes)
      if (change.first > tp) return change.first;
    return kNeverL;
  }
  const long double period = g.period_s;
  const long k = static_cast<long>(std::floor(tp / period - g.phase));
  for (long m = k; m <= k + 1; ++m) {
    const long double start = (m + static_cast<long double>(g.phase)) * period;
    const long double d = duty_of_period(g, m);
    long double edges[4] = {start, start + d * period, kNeverL, kNeverL};
    if (g.kind == Kind::kLow) {
      edges[2] = start + d * period + g.dead_time_s;
      edges[3] = start + period - g.dead_time_s;
    }
    long double best = kNeverL;
    for (long double e : edges)
      if (e > tp && e < best) best = e;
    if (best < kNeverL) return best;
  }
  return kNeverL;
}

DevicePattern GateBank::switch_pattern(double t) const {
  DevicePattern p = 0;
  for (const auto& [bit, gate] : switch_gate_)
    if (on(gates_[gate], t)) p |= DevicePattern{1} << bit;
  return p;
}

double GateBank::next_edge_after(double t) const {
  long double best = kNever;
  const long double tp = just_after(t) - resolution_s_;  // keeps the ulp guard of just_after
  for (const auto& [bit, gate] : switch_gate_) best = std::min(best, next_edge(gates_[gate], tp));
  return static_cast<double>(best);
}

double GateBank::next_edge_after(long double origin, double tau) const {
  long double best = kNever;
  for (const auto& [bit, gate] : switch_gate_)
    best = std::min(best, next_edge(gates_[gate], origin + tau));
  return static_cast<double>(best - origin);
}

}  // namespace pulsewise::detail
