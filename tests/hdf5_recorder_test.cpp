// Tests of the HDF5 trace recorder, fed by a synthetic run whose waveforms and cycle metrics are
// closed forms (tests/tools/synthetic_feed.hpp), read back with the library's TraceFile and with
// h5py.
#include <gtest/gtest.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <limits>
#include <set>
#include <string>
#include <vector>

#include "boost_circuit.hpp"
#include "pulsewise/error.hpp"
#include "pulsewise/hdf5_recorder.hpp"
#include "pulsewise/simulation.hpp"
#include "pulsewise/trace_file.hpp"
#include "synthetic_feed.hpp"
#include "test_output.hpp"

extern char** environ;

namespace pulsewise {
namespace {

using testing::SyntheticConverter;

std::filesystem::path output_dir() { return testing::fresh_output_dir("hdf5"); }

// Rows the recorder must write for `periods` periods of the default synthetic feed with n grid
// samples per period, when the only piece boundary on the grid is the period start (true for
// D = 0.3 and pieces split at D/2 and (1 + D)/2 with n = 16 or 64): per period n - 1 grid rows,
// two rows at the period start and two at switch-off (S1.i jumps there), one at each interval
// midpoint (all signals continuous); the run start has only the value after, the run end only
// the value before.
long expected_rows(long periods, int n) { return periods * ((n - 1) + 2 + 2 + 1 + 1) - 1 + 1; }

// Relative tolerance for a value the recorder evaluated with the same closed form at the same
// instant: only rounding separates them (common practice, no source).
constexpr double kSameFormula = 1e-12;

void expect_close(double actual, double expected, double scale, const std::string& what) {
  EXPECT_LE(std::abs(actual - expected), kSameFormula * scale)
      << what << ": " << actual << " vs " << expected;
}

// Every row equals the closed form just before or just after its instant: the first row of a
// pair at one instant is the value before, the second the value after, a single row both (or
// the one that exists at the start and end of the run).
void expect_rows_match_feed(const WaveformBlock& block, const SyntheticConverter& c, double end_s) {
  for (std::size_t r = 0; r < block.rows(); ++r) {
    const double t = block.time_s[r];
    const bool pair_first = r + 1 < block.rows() && block.time_s[r + 1] == t;
    const bool pair_second = r > 0 && block.time_s[r - 1] == t;
    const bool right = !pair_first && (pair_second || t < end_s);
    const std::vector<double> expected = c.limit(t, right);
    for (std::size_t k = 0; k < block.signal_count; ++k) {
      expect_close(
          block.value(r, k), expected[k], 3.0 + c.v_dc,
          "row " + std::to_string(r) + " signal " + std::to_string(k) + " t " + std::to_string(t));
    }
  }
}

bool python_has_h5py() {
  const std::string command = std::string(PULSEWISE_TEST_PYTHON) + " -c 'import h5py' 2>/dev/null";
  return std::system(command.c_str()) == 0;
}

std::string record(const std::filesystem::path& path, const SyntheticConverter& c, long periods,
                   RecordingOptions recording, Hdf5Options options = {}) {
  Hdf5Recorder recorder(path.string(), recording, TraceMetadata{}, options);
  c.feed(recorder, periods);
  recorder.close();
  return path.string();
}

TEST(Hdf5Recorder, StoresWaveformsEqualToTheAnalyticFunctionsAtEveryRow) {
  const SyntheticConverter c;
  const long periods = 20;
  RecordingOptions recording;
  recording.samples_per_period = 16;
  recording.flush_every_periods = 7;
  const std::string path = record(output_dir() / "waves.h5", c, periods, recording);

  const TraceFile trace(path);
  ASSERT_EQ(trace.info().signals.size(), 3u);
  EXPECT_EQ(trace.info().signals[1].name, "L1.i");
  EXPECT_EQ(trace.info().signals[1].unit, "A");
  const WaveformBlock block = trace.read_waveforms(0, -1);
  EXPECT_EQ(static_cast<long>(block.rows()), expected_rows(periods, 16));
  const double end = c.period_start(periods);
  expect_rows_match_feed(block, c, end);

  // Rows off the uniform grid stand only at piece boundaries (tau / T = 0.15, 0.3, 0.65).
  const double step = c.period_s / 16;
  for (std::size_t r = 0; r < block.rows(); ++r) {
    const double t = block.time_s[r];
    if (r > 0) {
      EXPECT_GE(t, block.time_s[r - 1]);
    }
    const double m = std::round(t / step);
    if (std::abs(t - m * step) <= 1e-9 * step) continue;
    const double tau = t / c.period_s - std::floor(t / c.period_s);
    const bool boundary =
        std::abs(tau - 0.15) < 1e-9 || std::abs(tau - 0.3) < 1e-9 || std::abs(tau - 0.65) < 1e-9;
    EXPECT_TRUE(boundary) << "row " << r << " at t = " << t;
  }
}

TEST(Hdf5Recorder, KeepsWaveformRowsOnlyInsideTheMergedRecordingWindows) {
  const SyntheticConverter c;
  const double T = c.period_s;
  RecordingOptions recording;
  recording.samples_per_period = 16;
  recording.windows = {{2.5 * T, 4 * T}, {10 * T, 10.2 * T}, {3 * T, 5 * T}};
  const std::string path = record(output_dir() / "windows.h5", c, 20, recording);

  const TraceFile trace(path);
  ASSERT_EQ(trace.info().windows.size(), 2u);  // [2.5 T, 4 T] and [3 T, 5 T] overlap
  EXPECT_EQ(trace.info().windows[0].start_s, 2.5 * T);
  EXPECT_EQ(trace.info().windows[0].end_s, 5 * T);
  const WaveformBlock block = trace.read_waveforms(0, -1);
  ASSERT_GT(block.rows(), 0u);
  long second = 0;
  for (std::size_t r = 0; r < block.rows(); ++r) {
    const double t = block.time_s[r];
    const bool in_first = t >= 2.5 * T && t <= 5 * T;
    const bool in_second = t >= 10 * T && t <= 10.2 * T;
    EXPECT_TRUE(in_first || in_second) << "row at t = " << t;
    second += in_second;
  }
  EXPECT_EQ(block.time_s.front(), 2.5 * T);
  EXPECT_EQ(block.time_s.back(), 10.2 * T);
  // Second window: both values at 10 T (S1.i jumps there), grid points 1/16, 2/16, 3/16 of T,
  // the piece boundary at 10.15 T and the window end.
  EXPECT_EQ(second, 2 + 3 + 1 + 1);
  expect_rows_match_feed(block, c, c.period_start(20));
}

TEST(Hdf5Recorder, RoundTripsEveryFieldOfThePerCycleTable) {
  const SyntheticConverter c;
  const long periods = 50;
  RecordingOptions recording;
  recording.flush_every_periods = 16;
  const std::string path = record(output_dir() / "cycles.h5", c, periods, recording);

  const TraceFile trace(path);
  ASSERT_EQ(trace.info().cycle_rows, periods);
  const std::vector<CycleMetrics> cycles = trace.read_cycles(0, -1);
  ASSERT_EQ(static_cast<long>(cycles.size()), periods);
  for (long k = 0; k < periods; ++k) {
    const CycleMetrics expected = c.cycle(k);
    const CycleMetrics& got = cycles[static_cast<std::size_t>(k)];
    EXPECT_EQ(got.index, k);
    EXPECT_EQ(got.start_time_s, expected.start_time_s);
    EXPECT_EQ(got.mode, ConductionMode::kCcm);
    ASSERT_EQ(got.intervals.size(), 2u);
    EXPECT_EQ(got.intervals[0].pattern, testing::kSwitchOn);
    EXPECT_EQ(got.intervals[0].fraction, c.duty);
    EXPECT_EQ(got.intervals[1].pattern, testing::kDiodeOn);
    EXPECT_EQ(got.intervals[1].fraction, 1.0 - c.duty);
    EXPECT_EQ(got.events, 3);
    EXPECT_EQ(got.energy_in_j, expected.energy_in_j);
    EXPECT_EQ(got.stored_energy_change_j, expected.stored_energy_change_j);
    EXPECT_EQ(got.dissipated_j, expected.dissipated_j);
    EXPECT_EQ(got.state_change, expected.state_change);
    ASSERT_EQ(got.signals.size(), 3u);
    for (std::size_t s = 0; s < 3; ++s) {
      EXPECT_EQ(got.signals[s].average, expected.signals[s].average);
      EXPECT_EQ(got.signals[s].rms, expected.signals[s].rms);
      EXPECT_EQ(got.signals[s].min, expected.signals[s].min);
      EXPECT_EQ(got.signals[s].max, expected.signals[s].max);
    }
  }
  // A block from the middle starts where it is asked to.
  const std::vector<CycleMetrics> middle = trace.read_cycles(20, 5);
  ASSERT_EQ(middle.size(), 5u);
  EXPECT_EQ(middle.front().index, 20);
}

TEST(Hdf5Recorder, RoundTripsTheEventLogWithTimesNamesAndKinds) {
  const SyntheticConverter c;
  const long periods = 12;
  const std::string path = record(output_dir() / "events.h5", c, periods, RecordingOptions{});

  const TraceFile trace(path);
  ASSERT_EQ(trace.info().event_rows, 3 * periods);
  const std::vector<EventRecord> events = trace.read_events(0, -1);
  for (long k = 0; k < periods; ++k) {
    const std::vector<EventRecord> expected = c.events(k);
    for (std::size_t e = 0; e < 3; ++e) {
      const EventRecord& got = events[static_cast<std::size_t>(3 * k) + e];
      EXPECT_EQ(got.time_s, expected[e].time_s);
      EXPECT_EQ(got.kind, expected[e].kind);
      EXPECT_EQ(got.element, expected[e].element);
      EXPECT_EQ(got.element_name, expected[e].element_name);
      EXPECT_EQ(got.pattern_after, expected[e].pattern_after);
    }
  }
}

TEST(Hdf5Recorder, StoresTheSummaryAndMarksTheFileComplete) {
  const SyntheticConverter c;
  const long periods = 9;
  RecordingOptions recording;
  TraceMetadata metadata;
  metadata.circuit_name = "synthetic boost";
  metadata.circuit_file = "data/synthetic.toml";
  // Longer than the 64 KiB an attribute may hold in the oldest HDF5 file format.
  metadata.circuit_text = std::string(100000, 'x');
  metadata.run_settings = "periods = 9";
  metadata.settings = {{"periods", "9"}, {"samples_per_period", "64"}};
  const std::string path = (output_dir() / "summary.h5").string();
  {
    Hdf5Recorder recorder(path, recording, metadata);
    c.feed(recorder, periods);
    recorder.close();
  }
  const TraceInfo info = read_trace_info(path);
  EXPECT_TRUE(info.complete);
  EXPECT_EQ(info.circuit_name, "synthetic boost");
  EXPECT_EQ(info.circuit_file, "data/synthetic.toml");
  EXPECT_EQ(info.circuit_text.size(), 100000u);
  EXPECT_EQ(info.run_settings, "periods = 9");
  ASSERT_EQ(info.settings.size(), 2u);
  EXPECT_EQ(info.program_version, kVersion);
  EXPECT_EQ(info.switching_period_s, c.period_s);
  EXPECT_EQ(info.periods_requested, periods);
  ASSERT_TRUE(info.summary.has_value());
  const RunSummary& s = *info.summary;
  const RunSummary expected = c.summary(periods);
  EXPECT_EQ(s.end, RunEnd::kCompleted);
  EXPECT_EQ(s.message, "synthetic run");
  EXPECT_EQ(s.cycles, periods);
  EXPECT_EQ(s.events, 3 * periods);
  EXPECT_EQ(s.cache_hits, expected.cache_hits);
  EXPECT_EQ(s.end_time_s, expected.end_time_s);
  EXPECT_EQ(s.last_cycle.index, periods - 1);
  ASSERT_EQ(s.last_cycle.signals.size(), 3u);
  EXPECT_EQ(s.last_cycle.signals[2].rms, expected.last_cycle.signals[2].rms);
  EXPECT_EQ(s.state_names, expected.state_names);
  ASSERT_EQ(s.final_state.size(), 2);
  EXPECT_EQ(s.final_state[1], c.i_min);
  EXPECT_EQ(s.startup.inductors, std::vector<std::string>{"L1"});
  EXPECT_EQ(s.startup.peak_inductor_current_a, std::vector<double>{c.i_max});
}

TEST(Hdf5Recorder, KeepsItsBuffersWithinTheBoundWhateverTheFlushInterval) {
  const SyntheticConverter c;
  const long periods = 2000;
  RecordingOptions recording;
  recording.samples_per_period = 64;
  recording.flush_every_periods = 1000000000;  // never by period count
  Hdf5Options options;
  options.buffer_bytes = 64 << 10;
  const std::filesystem::path path = output_dir() / "bounded.h5";
  Hdf5Recorder recorder(path.string(), recording, TraceMetadata{}, options);
  c.feed(recorder, periods);
  const RecorderProgress progress = recorder.progress();
  recorder.close();
  // One callback adds at most one piece's rows (n / 2 + 3 rows of 4 doubles) or one cycle row.
  const std::size_t one_callback = (64 / 2 + 3) * 4 * sizeof(double);
  EXPECT_LE(progress.peak_buffered_bytes, options.buffer_bytes + one_callback);
  // 2000 periods of ~70 rows of 32 bytes are ~4.5 MB: about 70 early flushes of 64 KiB.
  EXPECT_GT(progress.flushes, 50);
  EXPECT_EQ(TraceFile(path.string()).info().waveform_rows, expected_rows(periods, 64));
}

TEST(Hdf5Recorder, FlushesEveryAskedNumberOfPeriods) {
  const SyntheticConverter c;
  RecordingOptions recording;
  recording.flush_every_periods = 10;
  Hdf5Recorder recorder((output_dir() / "flushes.h5").string(), recording);
  std::vector<long> flushed;
  recorder.set_flush_listener(
      [&](const RecorderProgress& p) { flushed.push_back(p.cycles_flushed); });
  c.feed(recorder, 95);
  recorder.close();
  const std::set<long> distinct(flushed.begin(), flushed.end());
  EXPECT_EQ(distinct, (std::set<long>{0, 10, 20, 30, 40, 50, 60, 70, 80, 90, 95}));
  EXPECT_TRUE(std::is_sorted(flushed.begin(), flushed.end()));
}

TEST(Hdf5Recorder, RejectsAPathInAMissingDirectoryNamingIt) {
  const std::string path = (output_dir() / "no-such-dir" / "run.h5").string();
  try {
    Hdf5Recorder recorder(path, RecordingOptions{});
    FAIL() << "no error for " << path;
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find(path), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("does not exist"), std::string::npos) << e.what();
  }
}

TEST(Hdf5Recorder, ReleasesTheFileOnCloseWhileTheRecorderLives) {
  const SyntheticConverter c;
  const std::string path = (output_dir() / "released.h5").string();
  Hdf5Recorder recorder(path, RecordingOptions{});
  c.feed(recorder, 3);
  recorder.close();
  // HDF5 locks a file open for writing against other processes; another process can open it
  // for writing only once it is released.
  if (!python_has_h5py()) GTEST_SKIP() << PULSEWISE_TEST_PYTHON << " has no h5py";
  const std::string command = std::string(PULSEWISE_TEST_PYTHON) +
                              " -c \"import h5py, sys; h5py.File(sys.argv[1], 'r+').close()\" " +
                              path;
  EXPECT_EQ(std::system(command.c_str()), 0) << command;
}

TEST(Hdf5Recorder, RecordsTheCycleTableOfARunWithNoRecordedSignals) {
  const std::string path = (output_dir() / "no-signals.h5").string();
  Hdf5Recorder recorder(path, RecordingOptions{});
  recorder.on_start(RunInfo{{}, 1e-5, 0.0, 3e-5, 3});
  for (long k = 0; k < 3; ++k) {
    CycleMetrics cycle;
    cycle.index = k;
    cycle.start_time_s = 1e-5 * static_cast<double>(k);
    recorder.on_cycle(cycle);
  }
  recorder.on_finish(RunSummary{});
  recorder.close();
  const TraceFile trace(path);
  EXPECT_TRUE(trace.info().signals.empty());
  EXPECT_EQ(trace.info().cycle_rows, 3);
  EXPECT_TRUE(trace.info().warnings.empty());
  EXPECT_EQ(trace.read_cycles(0, -1).back().index, 2);
}

TEST(Hdf5Options, DefaultsValidate) { EXPECT_NO_THROW(Hdf5Options{}.validate()); }

TEST(Hdf5Options, RejectsADeflateLevelAboveNineNamingTheField) {
  Hdf5Options options;
  options.deflate_level = 12;
  try {
    options.validate();
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.element(), "deflate_level");
    EXPECT_EQ(e.kind(), ErrorKind::kInvalidOption);
  }
}

TEST(Hdf5Recorder, WritesAFileThatH5pyReadsWithTheLastCycleAverageOfTheWaveforms) {
  if (!python_has_h5py()) GTEST_SKIP() << PULSEWISE_TEST_PYTHON << " has no h5py";
  const SyntheticConverter c;
  RecordingOptions recording;
  recording.samples_per_period = 32;
  const std::string path = record(output_dir() / "h5py.h5", c, 30, recording);
  // L1.i and S1.i are piecewise linear with every breakpoint a row, so the trapezoidal rule is
  // exact up to rounding (check_trace.py default tolerance 1e-12 relative).
  const std::string command = std::string(PULSEWISE_TEST_PYTHON) + " " + PULSEWISE_SOURCE_DIR +
                              "/tests/python/check_trace.py " + path + " L1.i S1.i";
  EXPECT_EQ(std::system(command.c_str()), 0) << command;
}

// Runs the helper with stdout on a pipe.
struct Child {
  pid_t pid = -1;
  FILE* out = nullptr;
};

Child spawn_helper(const std::vector<std::string>& args) {
  int pipe_fds[2];
  if (pipe(pipe_fds) != 0) return {};
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_adddup2(&actions, pipe_fds[1], STDOUT_FILENO);
  posix_spawn_file_actions_addclose(&actions, pipe_fds[0]);
  std::vector<char*> argv;
  std::string program = PULSEWISE_TRACE_HELPER;
  argv.push_back(program.data());
  std::vector<std::string> copy = args;
  for (std::string& a : copy) argv.push_back(a.data());
  argv.push_back(nullptr);
  Child child;
  if (posix_spawn(&child.pid, program.c_str(), &actions, nullptr, argv.data(), environ) != 0) {
    child.pid = -1;
  }
  posix_spawn_file_actions_destroy(&actions);
  close(pipe_fds[1]);
  child.out = fdopen(pipe_fds[0], "r");
  return child;
}

// What the helper had reported when it was killed.
struct Killed {
  long cycles = 0;     // periods flushed by the third report
  double until = 0.0;  // time flushed up to, s
  bool ok = false;
};

// Runs the helper, kills it with SIGKILL after its third flush report with periods in it.
Killed run_and_kill(const std::vector<std::string>& args) {
  Killed killed;
  Child child = spawn_helper(args);
  EXPECT_GT(child.pid, 0);
  if (child.pid <= 0 || child.out == nullptr) return killed;
  long reports = 0;
  char line[256];
  while (reports < 3 && std::fgets(line, sizeof line, child.out) != nullptr) {
    long rows = 0;
    if (std::sscanf(line, "flushed %ld %lf %ld", &killed.cycles, &killed.until, &rows) == 3 &&
        killed.cycles > 0) {
      ++reports;
    }
  }
  kill(child.pid, SIGKILL);
  int status = 0;
  waitpid(child.pid, &status, 0);
  std::fclose(child.out);
  EXPECT_EQ(reports, 3) << "the helper did not report three flushes";
  EXPECT_TRUE(WIFSIGNALED(status)) << "the helper ended before the kill";
  killed.ok = reports == 3 && WIFSIGNALED(status);
  return killed;
}

TEST(Hdf5Recorder, FileOfAKilledRunHoldsEveryFlushedPeriod) {
  const SyntheticConverter c;  // the helper's synthetic feed uses the defaults too
  const std::string path = (output_dir() / "killed.h5").string();
  // 100 periods of 0.5 ms between flushes: a flush (about a millisecond) is a small target for
  // the kill, which lands between flushes.
  const Killed killed = run_and_kill({"--out", path, "--periods", "100000", "--flush-every", "100",
                                      "--samples", "16", "--period-delay-us", "500"});
  ASSERT_TRUE(killed.ok);
  const long cycles = killed.cycles;
  const double until = killed.until;

  const TraceFile trace(path);
  const TraceInfo& info = trace.info();
  EXPECT_FALSE(info.complete);
  EXPECT_FALSE(info.summary.has_value());
  EXPECT_GE(info.flushed_cycles, cycles);
  ASSERT_GE(info.cycle_rows, cycles);
  const std::vector<CycleMetrics> table = trace.read_cycles(0, -1);
  for (std::size_t k = 0; k < table.size(); ++k) {
    EXPECT_EQ(table[k].index, static_cast<long>(k));
    EXPECT_EQ(table[k].start_time_s, c.cycle(static_cast<long>(k)).start_time_s);
    EXPECT_EQ(table[k].signals[1].rms, c.cycle(static_cast<long>(k)).signals[1].rms);
  }
  const WaveformBlock block = trace.read_waveforms(0, -1);
  long before = 0, at = 0;
  for (double t : block.time_s) {
    before += t < until - 1e-9 * c.period_s;
    at += std::abs(t - until) <= 1e-9 * c.period_s;
  }
  // Every row of every flushed period: the expected rows up to the flushed time, less its end row.
  EXPECT_EQ(before, expected_rows(cycles, 16) - 1);
  EXPECT_GE(at, 1);
  // The last row is the value just before the last flushed instant.
  expect_rows_match_feed(block, c, info.flushed_until_s);
  std::printf("killed after the flush of %ld periods; the file holds %ld cycles, %ld rows\n",
              cycles, info.cycle_rows, info.waveform_rows);
}

}  // namespace
}  // namespace pulsewise

namespace pulsewise {
namespace {

// The real engine on a boost converter (tests/tools/boost_circuit.hpp), recorded in a window.
TEST(Hdf5Recorder, RecordsARealBoostRunWithEveryEventInstantAsAWaveformRow) {
  const double T = testing::kBoostPeriodS;
  const long periods = 300;
  SimulationOptions options;
  options.periods = periods;
  Simulation simulation(testing::boost_circuit(), options);
  RecordingOptions recording;
  recording.samples_per_period = 64;
  recording.flush_every_periods = 64;
  recording.windows = {{(periods - 3) * T, periods * T}};
  const std::string path = (output_dir() / "boost.h5").string();
  Hdf5Recorder recorder(path, recording);
  const RunSummary summary = simulation.run(&recorder);
  recorder.close();
  ASSERT_TRUE(summary.ok()) << summary.message;

  const TraceFile trace(path);
  const TraceInfo& info = trace.info();
  EXPECT_TRUE(info.complete);
  ASSERT_GE(trace.find_signal("L1.i"), 0);
  ASSERT_EQ(info.cycle_rows, periods);
  const std::vector<CycleMetrics> cycles = trace.read_cycles(0, -1);
  for (long k = 0; k < periods; ++k) {
    EXPECT_EQ(cycles[static_cast<std::size_t>(k)].index, k);
    EXPECT_NEAR(cycles[static_cast<std::size_t>(k)].start_time_s, k * T, 1e-12 * T);
  }
  EXPECT_EQ(cycles.back().signals[3].average, summary.last_cycle.signals[3].average);

  // Events are piece boundaries, so each event inside the window is a waveform row.
  const WaveformBlock block = trace.read_waveforms(0, -1);
  std::set<double> times(block.time_s.begin(), block.time_s.end());
  long inside = 0;
  for (const EventRecord& event : trace.read_events(0, -1)) {
    if (event.time_s < (periods - 3) * T || event.time_s > periods * T) continue;
    ++inside;
    EXPECT_TRUE(times.count(event.time_s)) << "no row at the event at t = " << event.time_s;
  }
  EXPECT_GE(inside, 6);  // two gate edges per period at least
  // No gap wider than the grid step.
  for (std::size_t r = 1; r < block.rows(); ++r) {
    EXPECT_LE(block.time_s[r] - block.time_s[r - 1], T / 64 * (1 + 1e-9));
  }

  if (!python_has_h5py()) GTEST_SKIP() << PULSEWISE_TEST_PYTHON << " has no h5py";
  // The waveforms are curved here (exponential pieces), so the trapezoidal rule errs by about
  // (T/64)^2 max|f''| / 12 (Press et al., Numerical Recipes, 3rd ed., section 4.1). With
  // L1.i'' = -C1.v' / L and out.v'' = i_C' / C from the circuit values that bound is about 1e-6
  // relative for both signals; 1e-5 allows a factor 10.
  const std::string command = std::string(PULSEWISE_TEST_PYTHON) + " " + PULSEWISE_SOURCE_DIR +
                              "/tests/python/check_trace.py " + path + " L1.i out.v --rtol 1e-5";
  EXPECT_EQ(std::system(command.c_str()), 0) << command;
}

TEST(Hdf5Recorder, FileOfAKilledRealEngineRunHoldsEveryFlushedPeriod) {
  const double T = testing::kBoostPeriodS;
  const std::string path = (output_dir() / "killed-boost.h5").string();
  const Killed killed =
      run_and_kill({"--out", path, "--periods", "100000", "--flush-every", "100", "--samples", "16",
                    "--period-delay-us", "500", "--source", "engine"});
  ASSERT_TRUE(killed.ok);
  const TraceFile trace(path);
  const TraceInfo& info = trace.info();
  EXPECT_FALSE(info.complete);
  EXPECT_GE(info.flushed_cycles, killed.cycles);
  ASSERT_GE(info.cycle_rows, killed.cycles);
  const std::vector<CycleMetrics> cycles = trace.read_cycles(0, -1);
  for (std::size_t k = 0; k < cycles.size(); ++k) {
    EXPECT_EQ(cycles[k].index, static_cast<long>(k));
  }
  // Waveforms of the whole run up to the flushed time, with no gap wider than the grid step.
  const WaveformBlock block = trace.read_waveforms(0, -1);
  ASSERT_GT(block.rows(), 0u);
  EXPECT_EQ(block.time_s.front(), 0.0);
  EXPECT_GE(block.time_s.back(), killed.until);
  for (std::size_t r = 1; r < block.rows(); ++r) {
    ASSERT_LE(block.time_s[r] - block.time_s[r - 1], T / 16 * (1 + 1e-9)) << "gap at row " << r;
  }
}

}  // namespace
}  // namespace pulsewise
