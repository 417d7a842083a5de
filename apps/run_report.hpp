// What `pulsewise run` reports about one simulation, as text for a person (print_run_report) or
// as JSON for scripts (run_report_json, schema in docs/summary-json.md).
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "losses.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise::app {

struct RunReport {
  std::string input_path;  // the circuit file
  std::string circuit_name;
  std::string trace_path;  // empty when no trace file was written
  double switching_period_s = 0.0;
  std::string output_signal;   // the signal start-up figures refer to, may be empty
  double settling_band = 0.0;  // fraction of the final average that counts as settled
  std::vector<std::string> interval_patterns;  // "S1 on, D1 off" per last-cycle interval
  PowerBalance power;                          // efficiency and loss split of the last period
  RunSummary summary;
};

// The text an engineer reads at a glance.
void print_run_report(const RunReport& report);

// The same content as JSON (docs/summary-json.md).
nlohmann::json run_report_json(const RunReport& report);

}  // namespace pulsewise::app
