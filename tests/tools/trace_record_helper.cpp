// Records a long run into a trace file and reports each flush on stdout, for the kill test and for
// measuring the recorder's peak memory.
//
//   trace_record_helper --out FILE [--periods N] [--flush-every K] [--samples S]
//                       [--window FIRST:LAST]... [--period-delay-us U] [--source synthetic|engine]
//                       [--deflate LEVEL] [--chunk-bytes BYTES]
//
// Windows are given in periods. Each flush prints "flushed <cycles> <until_s> <waveform_rows>";
// the end prints "done peak_rss_kib=<KiB> waveform_rows=<rows> file_bytes=<bytes> wall_s=<s>".
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>
#include <string_view>
#include <thread>

#include "boost_circuit.hpp"
#include "pulsewise/circuit.hpp"
#include "pulsewise/hdf5_recorder.hpp"
#include "pulsewise/simulation.hpp"
#include "synthetic_feed.hpp"

namespace {

struct Arguments {
  std::string out;
  long periods = 1000;
  long flush_every = 100;
  int samples = 64;
  std::vector<std::pair<double, double>> windows;  // periods
  long period_delay_us = 0;
  std::string source = "synthetic";
  int deflate = 1;
  long chunk_bytes = 128 << 10;
};

[[noreturn]] void usage(const char* problem) {
  std::fprintf(stderr, "trace_record_helper: %s\n", problem);
  std::exit(2);
}

Arguments parse(int argc, char** argv) {
  Arguments a;
  for (int k = 1; k < argc; ++k) {
    const std::string_view flag = argv[k];
    if (k + 1 >= argc) usage("every option takes a value");
    const char* value = argv[++k];
    if (flag == "--out") {
      a.out = value;
    } else if (flag == "--periods") {
      a.periods = std::atol(value);
    } else if (flag == "--flush-every") {
      a.flush_every = std::atol(value);
    } else if (flag == "--samples") {
      a.samples = std::atoi(value);
    } else if (flag == "--period-delay-us") {
      a.period_delay_us = std::atol(value);
    } else if (flag == "--deflate") {
      a.deflate = std::atoi(value);
    } else if (flag == "--chunk-bytes") {
      a.chunk_bytes = std::atol(value);
    } else if (flag == "--source") {
      a.source = value;
    } else if (flag == "--window") {
      double first = 0, last = 0;
      if (std::sscanf(value, "%lf:%lf", &first, &last) != 2) usage("--window FIRST:LAST");
      a.windows.emplace_back(first, last);
    } else {
      usage("unknown option");
    }
  }
  if (a.out.empty()) usage("give --out FILE");
  return a;
}

// Slows the feed down so that the time between flushes is long against a flush.
class Delay : public pulsewise::Observer {
 public:
  explicit Delay(long us) : us_(us) {}
  void on_cycle(const pulsewise::CycleMetrics&) override {
    if (us_ > 0) std::this_thread::sleep_for(std::chrono::microseconds(us_));
  }

 private:
  long us_;
};

// Hands every callback to the recorder, then to the delay.
class Pair : public pulsewise::Observer {
 public:
  Pair(pulsewise::Observer& a, pulsewise::Observer& b) : a_(a), b_(b) {}
  void on_start(const pulsewise::RunInfo& i) override { a_.on_start(i), b_.on_start(i); }
  void on_piece(const pulsewise::PieceView& p) override { a_.on_piece(p), b_.on_piece(p); }
  void on_event(const pulsewise::EventRecord& e) override { a_.on_event(e), b_.on_event(e); }
  void on_cycle(const pulsewise::CycleMetrics& c) override { a_.on_cycle(c), b_.on_cycle(c); }
  void on_finish(const pulsewise::RunSummary& s) override { a_.on_finish(s), b_.on_finish(s); }

 private:
  pulsewise::Observer& a_;
  pulsewise::Observer& b_;
};

}  // namespace

int main(int argc, char** argv) {
  const Arguments args = parse(argc, argv);
  const auto started = std::chrono::steady_clock::now();
  pulsewise::testing::SyntheticConverter synthetic;
  const double period =
      args.source == "engine" ? pulsewise::testing::kBoostPeriodS : synthetic.period_s;

  pulsewise::RecordingOptions recording;
  recording.samples_per_period = args.samples;
  recording.flush_every_periods = args.flush_every;
  for (const auto& [first, last] : args.windows) {
    recording.windows.push_back({first * period, last * period});
  }
  pulsewise::TraceMetadata metadata;
  metadata.circuit_name = "trace_record_helper " + args.source;
  pulsewise::Hdf5Options options;
  options.deflate_level = args.deflate;
  options.chunk_bytes = static_cast<std::size_t>(args.chunk_bytes);
  pulsewise::Hdf5Recorder recorder(args.out, recording, metadata, options);
  recorder.set_flush_listener([](const pulsewise::RecorderProgress& p) {
    std::printf("flushed %ld %.17g %ld\n", p.cycles_flushed, p.flushed_until_s, p.waveform_rows);
    std::fflush(stdout);
  });
  Delay delay(args.period_delay_us);
  Pair both(recorder, delay);

  if (args.source == "engine") {
    pulsewise::SimulationOptions options;
    options.periods = args.periods;
    pulsewise::Simulation simulation(pulsewise::testing::boost_circuit(), options);
    simulation.run(&both);
  } else if (args.source == "synthetic") {
    synthetic.feed(both, args.periods);
  } else {
    usage("--source synthetic|engine");
  }
  recorder.close();

  rusage usage_now{};
  getrusage(RUSAGE_SELF, &usage_now);
  const double wall =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  std::printf("done peak_rss_kib=%ld waveform_rows=%ld file_bytes=%ju wall_s=%.3f\n",
              usage_now.ru_maxrss, recorder.progress().waveform_rows,
              static_cast<std::uintmax_t>(std::filesystem::file_size(args.out)), wall);
  return 0;
}
