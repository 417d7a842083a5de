#include "run_report.hpp"

#include <fmt/core.h>
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "pulsewise/si_value.hpp"
#include "pulsewise/version.hpp"

namespace pulsewise::app {
namespace {

Unit unit_of(const SignalInfo& info) {
  return info.quantity == SignalQuantity::kVoltage ? Unit::kVolt : Unit::kAmpere;
}

// "12.3 mV"-style text, or "-" for a value that is not finite. `scale` is the signal's largest
// magnitude: values below 1e-9 of it are round-off around an exact zero (a diode current while
// the diode is off) and print as 0.
std::string si(double value, Unit unit, double scale = 0.0) {
  if (!std::isfinite(value)) return "-";
  if (std::abs(value) < 1e-9 * scale) value = 0.0;
  return format_si_value(value, unit);
}

// Engineering notation for quantities si_value.hpp has no unit for (W, J): "105.1 mW".
std::string eng(double value, const char* symbol) {
  if (!std::isfinite(value)) return "-";
  if (value != 0.0 && std::abs(value) < 1e-12) return fmt::format("{:.3g} {}", value, symbol);
  static constexpr const char* kPrefixes[] = {"p", "n", "u", "m", "", "k", "M", "G"};
  int exponent = 0;
  if (value != 0.0) exponent = static_cast<int>(std::floor(std::log10(std::abs(value)) / 3.0));
  exponent = std::clamp(exponent, -4, 3);
  return fmt::format("{:.4g} {}{}", value / std::pow(1000.0, exponent), kPrefixes[exponent + 4],
                     symbol);
}

std::string seconds(double value_s) { return si(value_s, Unit::kSecond); }

void print_run_line(const RunReport& r) {
  const RunSummary& s = r.summary;
  fmt::print("run        {} after {} periods (t = {}): {}\n", to_string(s.end), s.cycles,
             seconds(s.end_time_s), s.ok() ? "ok" : "ENDED ABNORMALLY");
  if (!s.ok() && !s.message.empty()) fmt::print("           {}\n", s.message);
  fmt::print("           {} events, {} configurations built, {} cache hits, {:.3f} s wall time\n",
             s.events, s.configurations_built, s.cache_hits, s.wall_time_s);
}

void print_last_cycle(const RunReport& r) {
  const CycleMetrics& c = r.summary.last_cycle;
  if (r.summary.cycles == 0) {
    fmt::print("last period  none completed\n");
    return;
  }
  fmt::print("last period  #{} from {}: {}\n", c.index, seconds(c.start_time_s), to_string(c.mode));
  for (std::size_t i = 0; i < c.intervals.size(); ++i) {
    const std::string devices = i < r.interval_patterns.size() ? r.interval_patterns[i] : "";
    fmt::print("  D{:<2}  {:.6f}   {}\n", i + 1, c.intervals[i].fraction, devices);
  }
}

void print_startup(const RunReport& r) {
  const StartupMetrics& st = r.summary.startup;
  fmt::print("start-up\n");
  for (std::size_t i = 0; i < st.inductors.size() && i < st.peak_inductor_current_a.size(); ++i) {
    fmt::print("  peak |{}.i|  {}\n", st.inductors[i],
               si(st.peak_inductor_current_a[i], Unit::kAmpere));
  }
  if (!r.output_signal.empty()) {
    const Unit unit = r.output_signal.ends_with(".i") ? Unit::kAmpere : Unit::kVolt;
    fmt::print("  {} peak {}, overshoot {:.2f} %, ", r.output_signal, si(st.output_peak, unit),
               100.0 * st.overshoot);
    if (st.settling_cycle >= 0) {
      fmt::print("settled ({:.0f} % band) from period {}\n", 100.0 * r.settling_band,
                 st.settling_cycle);
    } else {
      fmt::print("not settled\n");
    }
  }
  if (st.steady_state_cycle >= 0) {
    fmt::print("  steady state detected at period {}\n", st.steady_state_cycle);
  }
  const RunSummary& s = r.summary;
  if (s.repeated_periods > 0) {
    fmt::print(
        "  states recur to the last bit from period {} (a cycle of {} period{}): the {} "
        "periods after it repeat it\n",
        s.cycles - s.repeated_periods, s.recurrence_periods, s.recurrence_periods == 1 ? "" : "s",
        s.repeated_periods);
  }
}

void print_signals(const RunReport& r) {
  const RunSummary& s = r.summary;
  const std::vector<SignalStats>& stats = s.last_cycle.signals;
  if (stats.empty() || s.cycles == 0) return;
  std::size_t width = 6;
  for (const SignalInfo& info : s.recorded) width = std::max(width, info.name.size());
  fmt::print("signals over the last period (exact integrals)\n");
  fmt::print("  {:<{}}  {:>12} {:>12} {:>12} {:>12} {:>12}\n", "signal", width, "average", "rms",
             "min", "max", "p-p");
  for (std::size_t i = 0; i < stats.size() && i < s.recorded.size(); ++i) {
    const Unit u = unit_of(s.recorded[i]);
    const SignalStats& st = stats[i];
    const double scale = std::max(std::abs(st.min), std::abs(st.max));
    fmt::print("  {:<{}}  {:>12} {:>12} {:>12} {:>12} {:>12}\n", s.recorded[i].name, width,
               si(st.average, u, scale), si(st.rms, u, scale), si(st.min, u, scale),
               si(st.max, u, scale), si(st.peak_to_peak(), u, scale));
  }
}

void print_energy(const RunReport& r) {
  const CycleMetrics& c = r.summary.last_cycle;
  const PowerBalance& p = r.power;
  if (r.switching_period_s <= 0.0 || (c.energy_in_j == 0.0 && c.dissipated_j == 0.0)) return;
  fmt::print("power over the last period\n");
  fmt::print("  from sources {}, dissipated {}, stored energy change {}\n", eng(p.input_w, "W"),
             eng(p.dissipated_w, "W"), eng(c.stored_energy_change_j, "J"));
  if (p.load_known) {
    fmt::print("  into the load ({}) {}", fmt::join(p.load_elements, ", "), eng(p.load_w, "W"));
    if (p.efficiency >= 0.0) fmt::print(", efficiency {:.2f} %", 100.0 * p.efficiency);
    // Away from steady state the stored energy still changes and load / input is no efficiency.
    const double stored_w = c.stored_energy_change_j / r.switching_period_s;
    if (std::abs(stored_w) > 1e-3 * std::abs(p.input_w)) {
      fmt::print(" (not settled: stored energy changes by {} per period)",
                 eng(c.stored_energy_change_j, "J"));
    }
    fmt::print("\n");
  }
  for (const ElementLoss& loss : p.losses) {
    fmt::print("  loss in {:<10} {:>12}", loss.element, eng(loss.loss_w, "W"));
    if (p.input_w > 0.0) fmt::print("  {:6.2f} % of input", 100.0 * loss.loss_w / p.input_w);
    fmt::print("\n");
  }
}

nlohmann::json finite_or_null(double value) {
  return std::isfinite(value) ? nlohmann::json(value) : nlohmann::json(nullptr);
}

nlohmann::json last_cycle_json(const RunReport& r) {
  const CycleMetrics& c = r.summary.last_cycle;
  nlohmann::json intervals = nlohmann::json::array();
  for (std::size_t i = 0; i < c.intervals.size(); ++i) {
    intervals.push_back(
        {{"fraction", c.intervals[i].fraction},
         {"pattern", c.intervals[i].pattern},
         {"devices", i < r.interval_patterns.size() ? r.interval_patterns[i] : ""}});
  }
  nlohmann::json signals = nlohmann::json::array();
  for (std::size_t i = 0; i < c.signals.size() && i < r.summary.recorded.size(); ++i) {
    const SignalStats& st = c.signals[i];
    signals.push_back({{"name", r.summary.recorded[i].name},
                       {"unit", r.summary.recorded[i].unit()},
                       {"average", finite_or_null(st.average)},
                       {"rms", finite_or_null(st.rms)},
                       {"min", finite_or_null(st.min)},
                       {"max", finite_or_null(st.max)},
                       {"peak_to_peak", finite_or_null(st.peak_to_peak())}});
  }
  return {{"index", c.index},
          {"start_time_s", c.start_time_s},
          {"mode", to_string(c.mode)},
          {"intervals", intervals},
          {"events", c.events},
          {"energy_in_j", finite_or_null(c.energy_in_j)},
          {"stored_energy_change_j", finite_or_null(c.stored_energy_change_j)},
          {"dissipated_j", finite_or_null(c.dissipated_j)},
          {"signals", signals}};
}

nlohmann::json startup_json(const RunReport& r) {
  const StartupMetrics& st = r.summary.startup;
  nlohmann::json peaks = nlohmann::json::object();
  for (std::size_t i = 0; i < st.inductors.size() && i < st.peak_inductor_current_a.size(); ++i) {
    peaks[st.inductors[i]] = finite_or_null(st.peak_inductor_current_a[i]);
  }
  nlohmann::json out = {{"peak_inductor_current_a", peaks},
                        {"settling_cycle", st.settling_cycle},
                        {"steady_state_cycle", st.steady_state_cycle}};
  if (r.output_signal.empty()) {
    out["output_signal"] = nullptr;
    out["output_peak"] = nullptr;
    out["overshoot"] = nullptr;
  } else {
    out["output_signal"] = r.output_signal;
    out["output_peak"] = finite_or_null(st.output_peak);
    out["overshoot"] = finite_or_null(st.overshoot);
  }
  return out;
}

}  // namespace

void print_run_report(const RunReport& r) {
  fmt::print("pulsewise {}  {}", kVersion, r.input_path);
  if (!r.circuit_name.empty()) fmt::print("  ({})", r.circuit_name);
  fmt::print("\n");
  print_run_line(r);
  print_last_cycle(r);
  print_startup(r);
  print_signals(r);
  print_energy(r);
  if (!r.trace_path.empty()) fmt::print("trace file {}\n", r.trace_path);
}

nlohmann::json run_report_json(const RunReport& r) {
  const RunSummary& s = r.summary;
  const PowerBalance& p = r.power;
  nlohmann::json losses = nlohmann::json::object();
  for (const ElementLoss& loss : p.losses) losses[loss.element] = finite_or_null(loss.loss_w);
  nlohmann::json power = {
      {"input_w", finite_or_null(p.input_w)},
      {"dissipated_w", finite_or_null(p.dissipated_w)},
      {"load_elements", p.load_elements},
      {"load_w", p.load_known ? finite_or_null(p.load_w) : nlohmann::json(nullptr)},
      {"efficiency", p.efficiency >= 0.0 ? nlohmann::json(p.efficiency) : nullptr},
      {"losses_w", losses},
      {"unattributed_w", finite_or_null(p.unattributed_w)}};
  nlohmann::json final_state = nlohmann::json::object();
  for (std::size_t i = 0; i < s.state_names.size() && i < std::size_t(s.final_state.size()); ++i) {
    final_state[s.state_names[i]] = finite_or_null(s.final_state[Eigen::Index(i)]);
  }
  return {
      {"format", "pulsewise-run-summary"},
      {"format_version", 1},
      {"program_version", kVersion},
      {"input", r.input_path},
      {"circuit", r.circuit_name},
      {"trace_file", r.trace_path.empty() ? nlohmann::json(nullptr) : nlohmann::json(r.trace_path)},
      {"ok", s.ok()},
      {"end", to_string(s.end)},
      {"message", s.message},
      {"cycles", s.cycles},
      {"events", s.events},
      {"configurations_built", s.configurations_built},
      {"cache_hits", s.cache_hits},
      {"replayed_periods", s.replayed_periods},
      {"kernel_pieces", s.kernel_pieces},
      {"operator_pieces", s.operator_pieces},
      {"repeated_periods", s.repeated_periods},
      {"recurrence_periods", s.recurrence_periods},
      {"wall_time_s", s.wall_time_s},
      {"end_time_s", s.end_time_s},
      {"switching_period_s", r.switching_period_s},
      {"last_cycle", last_cycle_json(r)},
      {"startup", startup_json(r)},
      {"power", power},
      {"final_state", final_state}};
}

}  // namespace pulsewise::app
