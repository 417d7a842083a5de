#include "verify.hpp"

#include <fmt/core.h>

#include <algorithm>
#include <array>
#include <cmath>

#include "pulsewise/error.hpp"

namespace pulsewise::app {
namespace {

constexpr double kInputV = 10.0;
constexpr double kFrequencyHz = 100e3;
constexpr double kPeriodS = 1.0 / kFrequencyHz;
constexpr double kLoadOhm = 10.0;
// R C = 300 Ts: ripple bound Ts / (R C) = 0.33 % < 0.5 % (the M check's ripple limit), while the
// slowest transient (CCM, decay time 2 R C = 600 periods) settles in a few ten thousand periods.
constexpr double kOutputCapacitanceF = 300.0 * kPeriodS / kLoadOhm;
// 1 micro-ohm: an ideal device up to a relative drop of 1e-7 at the 10 ohm load, far below the
// 0.2 % tolerance; non-zero so that no configuration closes a zero-resistance loop.
constexpr double kOnResistanceOhm = 1e-6;

constexpr std::array<double, 3> kGridDuties = {0.25, 0.5, 0.75};
// K / K_crit: two points in DCM, two in CCM, all more than 5 % away from the boundary.
constexpr std::array<double, 4> kGridKFactors = {0.25, 0.6, 1.6, 4.0};
constexpr std::array<Converter, 3> kConverters = {Converter::kBuck, Converter::kBoost,
                                                  Converter::kBuckBoost};

InputError bad_option(const std::string& option, const std::string& problem,
                      const std::string& fix) {
  // Command-line options are no circuit elements: the option leads the problem text instead.
  return InputError(ErrorKind::kInvalidOption, "", option + ": " + problem, fix);
}

bool is_mode_ccm(ConductionMode mode) { return mode == ConductionMode::kCcm; }

const char* mode_name(bool ccm) { return ccm ? "CCM" : "DCM"; }

}  // namespace

const char* to_string(Converter converter) {
  switch (converter) {
    case Converter::kBuck: return "buck";
    case Converter::kBoost: return "boost";
    case Converter::kBuckBoost: return "buck-boost";
  }
  return "?";
}

std::optional<Converter> parse_converter(std::string_view name) {
  for (Converter c : kConverters) {
    if (name == to_string(c)) return c;
  }
  return std::nullopt;
}

// Erickson & Maksimovic, 2nd ed., ch. 2: volt-second balance on the inductor in CCM.
double ccm_ratio(Converter converter, double duty) {
  switch (converter) {
    case Converter::kBuck: return duty;
    case Converter::kBoost: return 1.0 / (1.0 - duty);
    case Converter::kBuckBoost: return -duty / (1.0 - duty);
  }
  return 0.0;
}

// Erickson & Maksimovic, 2nd ed., ch. 5: DCM conversion ratios with K = 2 L / (R Ts).
double dcm_ratio(Converter converter, double duty, double k) {
  switch (converter) {
    case Converter::kBuck: return 2.0 / (1.0 + std::sqrt(1.0 + 4.0 * k / (duty * duty)));
    case Converter::kBoost: return (1.0 + std::sqrt(1.0 + 4.0 * duty * duty / k)) / 2.0;
    case Converter::kBuckBoost: return -duty / std::sqrt(k);
  }
  return 0.0;
}

// Erickson & Maksimovic, 2nd ed., ch. 5: the converter is in CCM when K > K_crit(D).
double critical_k(Converter converter, double duty) {
  switch (converter) {
    case Converter::kBuck: return 1.0 - duty;
    case Converter::kBoost: return duty * (1.0 - duty) * (1.0 - duty);
    case Converter::kBuckBoost: return (1.0 - duty) * (1.0 - duty);
  }
  return 0.0;
}

bool ccm_expected(Converter converter, double duty, double k) {
  return k > critical_k(converter, duty);
}

double closed_form_ratio(Converter converter, double duty, double k) {
  return ccm_expected(converter, duty, k) ? ccm_ratio(converter, duty)
                                          : dcm_ratio(converter, duty, k);
}

void VerifyOptions::validate() const {
  if (duty && !(*duty > 0.0 && *duty < 1.0)) {
    throw bad_option("--duty", fmt::format("duty cycle {} is outside (0, 1)", *duty),
                     "give a duty cycle strictly between 0 and 1, e.g. --duty 0.3");
  }
  if (k && !(*k > 0.0 && std::isfinite(*k))) {
    throw bad_option("--k", fmt::format("K = {} is not a positive number", *k),
                     "give K = 2L/(R Ts) > 0, e.g. --k 0.05");
  }
  if (!(ratio_tolerance > 0.0) || !(ripple_limit > 0.0) || !(mode_margin >= 0.0)) {
    throw bad_option("tolerances", "a tolerance is not positive", "use positive tolerances");
  }
  if (max_periods < 1) {
    throw bad_option("--max-periods", fmt::format("{} periods is fewer than one", max_periods),
                     "give at least 1 period, e.g. --max-periods 200000");
  }
}

std::vector<VerifyPoint> verify_points(const VerifyOptions& options) {
  std::vector<VerifyPoint> points;
  for (Converter converter : kConverters) {
    if (options.converter && *options.converter != converter) continue;
    std::vector<double> duties(kGridDuties.begin(), kGridDuties.end());
    if (options.duty) duties = {*options.duty};
    for (double duty : duties) {
      if (options.k) {
        points.push_back({converter, duty, *options.k});
        continue;
      }
      for (double factor : kGridKFactors) {
        points.push_back({converter, duty, factor * critical_k(converter, duty)});
      }
    }
  }
  return points;
}

Circuit build_converter(const VerifyPoint& point) {
  const double inductance_h = point.k * kLoadOhm * kPeriodS / 2.0;
  const SwitchOptions switch_options{.on_resistance_ohm = kOnResistanceOhm};
  const DiodeOptions diode_options{.on_resistance_ohm = kOnResistanceOhm};
  Circuit c(fmt::format("verify {} D={} K={}", to_string(point.converter), point.duty, point.k));
  c.add_voltage_source("Vin", "in", "0", Waveform::constant(kInputV));
  switch (point.converter) {
    case Converter::kBuck:
      // DB1 is the switch's body diode. Started from rest, the output LC overshoots (up to
      // 2 D V_in, above V_in for D > 0.5), the inductor current reverses while S1 is on, and
      // without DB1 the ideal switch would have to interrupt it at turn-off. In steady state
      // the inductor current of a buck never reverses and DB1 stays off.
      c.add_switch("S1", "in", "sw", "gate", switch_options)
          .add_diode("DB1", "sw", "in", diode_options)
          .add_diode("D1", "0", "sw", diode_options)
          .add_inductor("L1", "sw", "out", inductance_h);
      break;
    case Converter::kBoost:
      c.add_inductor("L1", "in", "sw", inductance_h)
          .add_switch("S1", "sw", "0", "gate", switch_options)
          .add_diode("D1", "sw", "out", diode_options);
      break;
    case Converter::kBuckBoost:
      // Inverting: the inductor charges from the input, then discharges into the output
      // through the diode, pulling "out" below ground.
      c.add_switch("S1", "in", "sw", "gate", switch_options)
          .add_inductor("L1", "sw", "0", inductance_h)
          .add_diode("D1", "out", "sw", diode_options);
      break;
  }
  c.add_capacitor("C1", "out", "0", kOutputCapacitanceF).add_resistor("R1", "out", "0", kLoadOhm);
  PwmModulator pwm;
  pwm.name = "gate";
  pwm.frequency_hz = kFrequencyHz;
  pwm.duty_cycle = point.duty;
  c.add_modulator(pwm);
  return c;
}

bool VerifyRow::passed() const {
  const bool ran = end == RunEnd::kSteadyState;
  return ran && ratio_ok && (!mode_checked || mode_ok);
}

VerifyRow check_point(const VerifyPoint& point, const VerifyOptions& options) {
  VerifyRow row;
  row.point = point;
  row.k_crit = critical_k(point.converter, point.duty);
  row.ccm_expected = ccm_expected(point.converter, point.duty, point.k);
  row.ratio_expected = closed_form_ratio(point.converter, point.duty, point.k);
  row.mode_checked = std::abs(point.k / row.k_crit - 1.0) > options.mode_margin;

  SimulationOptions sim_options;
  sim_options.periods = options.max_periods;
  sim_options.stop_at_steady_state = true;
  sim_options.recorded_signals = {"out.v"};
  sim_options.output_signal = "out.v";

  Simulation simulation(build_converter(point), sim_options);
  const RunSummary summary = simulation.run();
  row.end = summary.end;
  row.cycles = summary.cycles;
  if (summary.end != RunEnd::kSteadyState) {
    row.note = summary.ok() ? fmt::format("no steady state within {} periods", summary.cycles)
                            : fmt::format("run ended: {}", summary.message);
  }
  if (summary.last_cycle.signals.empty()) {
    if (row.note.empty()) row.note = "no output statistics";
    return row;
  }
  const SignalStats& out = summary.last_cycle.signals.front();
  row.mode = summary.last_cycle.mode;
  row.ratio_simulated = out.average / kInputV;
  row.ratio_error =
      std::abs(row.ratio_simulated - row.ratio_expected) / std::abs(row.ratio_expected);
  row.ripple = out.average != 0.0 ? out.peak_to_peak() / std::abs(out.average) : INFINITY;
  row.mode_ok = is_mode_ccm(row.mode) == row.ccm_expected &&
                (row.mode == ConductionMode::kCcm || row.mode == ConductionMode::kDcm);
  const bool ripple_small = row.ripple < options.ripple_limit;
  row.ratio_ok = ripple_small && row.ratio_error < options.ratio_tolerance;
  if (row.note.empty()) {
    if (!ripple_small) {
      row.note = fmt::format("output ripple {:.2f} % too large for the small-ripple closed form",
                             100.0 * row.ripple);
    } else if (!row.ratio_ok) {
      row.note = fmt::format("M off by {:.3f} %", 100.0 * row.ratio_error);
    } else if (row.mode_checked && !row.mode_ok) {
      row.note =
          fmt::format("mode {} instead of {}", to_string(row.mode), mode_name(row.ccm_expected));
    }
  }
  return row;
}

bool print_verify_table(const std::vector<VerifyRow>& rows) {
  fmt::print("{:<10} {:>5} {:>9} {:>9} {:>5} {:>5} {:>10} {:>10} {:>9} {:>8} {:>7}  {}\n",
             "converter", "D", "K", "K_crit", "mode", "sim", "M closed", "M sim", "error", "ripple",
             "periods", "result");
  bool all_passed = true;
  for (const VerifyRow& r : rows) {
    all_passed = all_passed && r.passed();
    const std::string expected =
        r.mode_checked ? mode_name(r.ccm_expected) : fmt::format("({})", mode_name(r.ccm_expected));
    fmt::print(
        "{:<10} {:>5.3f} {:>9.5f} {:>9.5f} {:>5} {:>5} {:>10.6f} {:>10.6f} {:>8.4f}% "
        "{:>7.3f}% {:>7}  {}{}\n",
        to_string(r.point.converter), r.point.duty, r.point.k, r.k_crit, expected,
        to_string(r.mode), r.ratio_expected, r.ratio_simulated, 100.0 * r.ratio_error,
        100.0 * r.ripple, r.cycles, r.passed() ? "pass" : "FAIL",
        r.note.empty() ? "" : "  " + r.note);
  }
  const long passed =
      std::count_if(rows.begin(), rows.end(), [](const VerifyRow& r) { return r.passed(); });
  fmt::print(
      "\n{} of {} rows pass (M within 0.2 % where output ripple < 0.5 %; mode checked where "
      "|K/K_crit - 1| > 5 %, shown in parentheses otherwise)\n",
      passed, rows.size());
  fmt::print(
      "Sources: Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed. (2001):\n"
      "  ch. 2, CCM by inductor volt-second balance: buck M = D, boost M = 1/(1-D),\n"
      "         buck-boost M = -D/(1-D);\n"
      "  ch. 5, DCM with K = 2L/(R Ts), CCM when K > K_crit:\n"
      "         buck       M = 2/(1+sqrt(1+4K/D^2)),  K_crit = 1-D;\n"
      "         boost      M = (1+sqrt(1+4D^2/K))/2,  K_crit = D(1-D)^2;\n"
      "         buck-boost M = -D/sqrt(K),            K_crit = (1-D)^2.\n"
      "Circuits: 10 V input, 100 kHz, 10 ohm load, C = 300 Ts/R, L = K R Ts/2; switch and diode\n"
      "  with 1 micro-ohm on-resistance, open off-state, no forward drop; run from rest to steady\n"
      "  state; M is the exact average of V_out/V_in over the last period.\n");
  return all_passed;
}

}  // namespace pulsewise::app
