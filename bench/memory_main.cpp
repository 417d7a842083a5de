// Peak resident memory of a long run (issue 4, section 3): case 1 from its circuit file for
// 1e6 periods (5 s of simulated time) with the HDF5 trace recorder attached, waveforms recorded
// in two windows of 20 periods at the start and at the end, and the recorder's per-cycle table
// and event log on (its defaults). Peak resident memory is getrusage(RUSAGE_SELF).ru_maxrss,
// which Linux reports in KiB. Prints one JSON object on stdout.
//
//   bench_memory <trace file> [periods]
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>

#include "pulsewise/circuit_file.hpp"
#include "pulsewise/hdf5_recorder.hpp"
#include "pulsewise/simulation.hpp"

#ifndef PWBENCH_DATA_DIR
#error "PWBENCH_DATA_DIR must name bench/data"
#endif

namespace {

long peak_rss_kib() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return usage.ru_maxrss;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: bench_memory <trace file> [periods]\n");
    return 2;
  }
  const std::string trace = argv[1];
  const long periods = argc > 2 ? std::atol(argv[2]) : 1'000'000;
  constexpr long kWindowPeriods = 20;
  try {
    pulsewise::CircuitFile file =
        pulsewise::load_circuit_file(std::string(PWBENCH_DATA_DIR) + "/case1-dcm-boost.toml");
    file.simulation.periods = periods;
    const double period_s = file.circuit.first_modulator_period_s();
    file.recording.windows = {
        {0.0, kWindowPeriods * period_s},
        {static_cast<double>(periods - kWindowPeriods) * period_s, periods * period_s}};
    file.recording.output_path = trace;
    const long rss_before = peak_rss_kib();
    pulsewise::TraceMetadata metadata;
    metadata.circuit_name = file.circuit.name();
    metadata.circuit_file = file.path;
    metadata.circuit_text = file.text;
    const auto start = std::chrono::steady_clock::now();
    pulsewise::Simulation simulation(file.circuit, file.simulation);
    pulsewise::Hdf5Recorder recorder(trace, file.recording, metadata);
    const pulsewise::RunSummary summary = simulation.run(&recorder);
    recorder.close();
    const double seconds =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    const pulsewise::RecorderProgress progress = recorder.progress();
    std::printf(
        "{\"periods\": %ld, \"completed\": %s, \"cycles\": %ld, \"peak_rss_kib\": %ld, "
        "\"rss_before_run_kib\": %ld, \"wall_s\": %.3f, \"trace_bytes\": %lld, "
        "\"waveform_rows\": %ld, \"cycle_rows\": %ld, \"event_rows\": %ld, "
        "\"peak_buffered_bytes\": %zu}\n",
        periods, summary.ok() ? "true" : "false", summary.cycles, peak_rss_kib(), rss_before,
        seconds, static_cast<long long>(std::filesystem::file_size(trace)), progress.waveform_rows,
        progress.cycle_rows, progress.event_rows, progress.peak_buffered_bytes);
    return summary.ok() ? 0 : 3;
  } catch (const std::exception& error) {
    std::fprintf(stderr, "bench_memory: %s\n", error.what());
    return 2;
  }
}
