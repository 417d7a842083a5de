// The closed-form check behind `pulsewise verify`: ideal buck, boost and buck-boost converters
// built with the C++ API are simulated to steady state over a grid of duty cycles D and
// K = 2 L / (R Ts), and the simulated average conversion ratio M = V_out / V_in and conduction mode
// are compared with the textbook results
//   Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed., Kluwer/Springer 2001:
//   ch. 2 (CCM, volt-second balance) and ch. 5 (DCM, mode boundary K_crit).
// The formulas live here, in the driver, and nowhere in the engine.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "pulsewise/circuit.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise::app {

enum class Converter { kBuck, kBoost, kBuckBoost };
const char* to_string(Converter converter);
std::optional<Converter> parse_converter(std::string_view name);  // "buck", "boost", "buck-boost"

// Closed forms (Erickson & Maksimovic, 2nd ed.). duty in (0, 1), k = 2 L / (R Ts) > 0.
double ccm_ratio(Converter converter, double duty);             // ch. 2
double dcm_ratio(Converter converter, double duty, double k);   // ch. 5
double critical_k(Converter converter, double duty);            // ch. 5: CCM when K > K_crit
bool ccm_expected(Converter converter, double duty, double k);  // K > K_crit
double closed_form_ratio(Converter converter, double duty, double k);

struct VerifyPoint {
  Converter converter = Converter::kBuck;
  double duty = 0.5;  // duty cycle of the switch, 0..1
  double k = 1.0;     // 2 L / (R Ts)
};

// Options of `pulsewise verify`. Every field has a default; validate() explains what is wrong.
struct VerifyOptions {
  std::optional<Converter> converter;  // only this converter; empty: buck, boost and buck-boost
  std::optional<double> duty;          // only this duty cycle, 0..1 exclusive; empty: the grid
  std::optional<double> k;             // only this K; empty: K_crit times each grid factor
  // Relative error allowed in M. 0.2 %: the simulated M is the exact average of the last period;
  // with ideal devices what remains is the on-resistance drop (1e-7 here) and the distance to
  // steady state (below 1e-5), so 0.2 % leaves a wide margin yet catches any wrong sub-interval.
  double ratio_tolerance = 2e-3;
  // The M check applies only where the output ripple (peak-to-peak / |average|) is below this:
  // the closed forms assume a small-ripple output (ch. 2, small-ripple approximation).
  double ripple_limit = 5e-3;
  // The mode is checked only where |K / K_crit - 1| exceeds this: at the boundary either is right.
  double mode_margin = 0.05;
  // Cap on the periods simulated per point while waiting for steady state.
  long max_periods = 200000;

  // Throws InputError (kInvalidOption) naming the option and the fix.
  void validate() const;
};

// The default grid: D in {0.25, 0.5, 0.75} and K = K_crit times {0.25, 0.6, 1.6, 4}, so every
// point lies well on one side of the boundary; narrowed by the options.
std::vector<VerifyPoint> verify_points(const VerifyOptions& options);

// The ideal converter of one point: 10 V input, 100 kHz, 10 ohm load, L = K R Ts / 2,
// C = 300 Ts / R (output ripple at most Ts / (R C) = 0.33 % for boost and buck-boost, whose
// capacitor alone feeds the load for part of each period), devices with
// 1 micro-ohm on-resistance, open off-state and no forward drop. Output node "out".
Circuit build_converter(const VerifyPoint& point);

struct VerifyRow {
  VerifyPoint point;
  double k_crit = 0.0;
  bool ccm_expected = false;
  ConductionMode mode = ConductionMode::kNone;  // simulated, last period
  double ratio_expected = 0.0;                  // closed form
  double ratio_simulated = 0.0;                 // average V_out / V_in over the last period
  double ratio_error = 0.0;                     // |simulated - expected| / |expected|
  double ripple = 0.0;                          // output peak-to-peak / |average|, last period
  bool mode_checked = false;
  bool mode_ok = false;
  bool ratio_ok = false;
  RunEnd end = RunEnd::kCompleted;
  long cycles = 0;
  std::string note;  // why the row failed, when it did

  bool passed() const;
};

VerifyRow check_point(const VerifyPoint& point, const VerifyOptions& options);

// Prints the table and the sources under it; returns true when every row passed.
bool print_verify_table(const std::vector<VerifyRow>& rows);

}  // namespace pulsewise::app
