// Accuracy against run length: pulsewise's final cycle average of the output for each case after
// 2 000 and 20 000 periods against the long-double reference of the same length, and the number
// of periods (after the first 1 000) whose event count differs from the most common one, which
// points at missed or extra events. Prints one JSON object per line.
//
//   bench_accuracy
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <string>

#include "pulsewise/circuit_file.hpp"
#include "pulsewise/simulation.hpp"
#include "reference.hpp"

#ifndef PWBENCH_DATA_DIR
#error "PWBENCH_DATA_DIR must name bench/data"
#endif

namespace {

constexpr long kSettledFrom = 1000;  // periods after which the event count is steady

class EventCounter : public pulsewise::Observer {
 public:
  void on_cycle(const pulsewise::CycleMetrics& cycle) override {
    if (cycle.index >= kSettledFrom) ++histogram_[cycle.events];
  }
  long odd_periods() const {
    long total = 0, most = 0;
    for (const auto& [events, count] : histogram_) {
      total += count;
      most = std::max(most, count);
    }
    return total - most;
  }

 private:
  std::map<long, long> histogram_;
};

template <template <class> class Case>
void check(const char* file_name, long periods) {
  pulsewise::CircuitFile file =
      pulsewise::load_circuit_file(std::string(PWBENCH_DATA_DIR) + "/" + file_name);
  file.simulation.periods = periods;
  pulsewise::Simulation simulation(file.circuit, file.simulation);
  EventCounter counter;
  const pulsewise::RunSummary summary = simulation.run(&counter);
  double average = NAN;
  for (std::size_t k = 0; k < summary.recorded.size(); ++k)
    if (summary.recorded[k].name == file.simulation.output_signal)
      average = summary.last_cycle.signals[k].average;
  const long double reference = pwbench::ReferenceSolver<Case>({periods, 0.5L}).run().final_average;
  const double error = static_cast<double>(
      std::fabs(static_cast<long double>(average) - reference) / std::fabs(reference));
  std::printf(
      "{\"case\": \"%s\", \"periods\": %ld, \"end_time_s\": %.6g, \"ok\": %s, "
      "\"pulsewise_v\": %.15g, \"reference_v\": %.18Lg, \"rel_error\": %.3e, "
      "\"odd_periods\": %ld}\n",
      Case<double>::kName.data(), periods, summary.end_time_s, summary.ok() ? "true" : "false",
      average, reference, error, counter.odd_periods());
  std::fflush(stdout);
}

template <template <class> class Case>
void check_case(const char* file_name) {
  for (long periods : {2000L, 20000L}) check<Case>(file_name, periods);
}

}  // namespace

int main() {
  try {
    check_case<pwbench::DcmBoost>("case1-dcm-boost.toml");
    check_case<pwbench::SyncBuck>("case2-sync-buck.toml");
    check_case<pwbench::InterleavedBuck>("case3-interleaved-buck.toml");
    check_case<pwbench::DcmSepic>("case4-dcm-sepic.toml");
  } catch (const std::exception& error) {
    std::fprintf(stderr, "bench_accuracy: %s\n", error.what());
    return 2;
  }
  return 0;
}
