// Tests of the trace reader: what it says about a file, how it refuses files that are not traces,
// and the CSV export.
#include <H5Cpp.h>
#include <gtest/gtest.h>

#include <charconv>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "pulsewise/error.hpp"
#include "pulsewise/hdf5_recorder.hpp"
#include "pulsewise/trace_file.hpp"
#include "synthetic_feed.hpp"
#include "test_output.hpp"

namespace pulsewise {
namespace {

using testing::SyntheticConverter;

std::filesystem::path output_dir() { return testing::fresh_output_dir("trace"); }

std::string write_trace(const std::filesystem::path& path, long periods, bool finish = true) {
  const SyntheticConverter c;
  RecordingOptions recording;
  recording.samples_per_period = 8;
  recording.flush_every_periods = 4;
  TraceMetadata metadata;
  metadata.circuit_name = "synthetic boost";
  Hdf5Recorder recorder(path.string(), recording, metadata);
  c.feed(recorder, periods, finish);
  if (finish) recorder.close();
  return path.string();
}

// The InputError thrown by opening `path`; fails the test if there is none.
std::string open_error(const std::string& path) {
  try {
    TraceFile trace(path);
    ADD_FAILURE() << "opened " << path << " without error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, path);
    return e.what();
  }
  return {};
}

bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

TEST(TraceFile, RejectsATextFileAsNotHdf5NamingTheFile) {
  const std::string path = (output_dir() / "notes.h5").string();
  std::ofstream(path) << "these are notes, not a trace\n";
  const std::string message = open_error(path);
  EXPECT_TRUE(contains(message, path)) << message;
  EXPECT_TRUE(contains(message, "not an HDF5 file")) << message;
}

TEST(TraceFile, RejectsAnHdf5FileThatIsNotATrace) {
  const std::string path = (output_dir() / "other.h5").string();
  {
    H5::H5File file(path, H5F_ACC_TRUNC);
    file.createGroup("/data");
  }
  const std::string message = open_error(path);
  EXPECT_TRUE(contains(message, "not a pulsewise trace")) << message;
}

TEST(TraceFile, RejectsAMissingFile) {
  const std::string message = open_error((output_dir() / "absent.h5").string());
  EXPECT_TRUE(contains(message, "does not exist")) << message;
}

TEST(TraceFile, RejectsATruncatedTraceWithAnInputErrorNotACrash) {
  const std::filesystem::path dir = output_dir();
  const std::string whole = write_trace(dir / "whole.h5", 40);
  const std::string cut = (dir / "cut.h5").string();
  {
    std::ifstream in(whole, std::ios::binary);
    std::string bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    std::ofstream(cut, std::ios::binary).write(bytes.data(), static_cast<long>(bytes.size() / 2));
  }
  const std::string message = open_error(cut);
  EXPECT_TRUE(contains(message, "damaged or truncated")) << message;
}

TEST(TraceFile, DescribesSignalsCountsAndHowTheRunEnded) {
  const TraceInfo info = read_trace_info(write_trace(output_dir() / "run.h5", 10));
  const std::string text = describe(info);
  EXPECT_TRUE(contains(text, "synthetic boost")) << text;
  EXPECT_TRUE(contains(text, "out.v [V]")) << text;
  EXPECT_TRUE(contains(text, "L1.i [A]")) << text;
  EXPECT_TRUE(contains(text, "switching period: 10 us")) << text;
  EXPECT_TRUE(contains(text, "cycles: 10 rows")) << text;
  EXPECT_TRUE(contains(text, "events: 30 rows")) << text;
  EXPECT_TRUE(contains(text, "run: completed after 10 cycles")) << text;
  // out.v averages v_dc = 12 V over a whole period of its sine.
  EXPECT_TRUE(contains(text, "out.v: average 12 V")) << text;
}

TEST(TraceFile, DescribesAnUnfinishedRunByWhatWasFlushed) {
  const std::filesystem::path path = output_dir() / "unfinished.h5";
  {
    const SyntheticConverter c;
    RecordingOptions recording;
    recording.flush_every_periods = 4;
    Hdf5Recorder recorder(path.string(), recording);
    c.feed(recorder, 10, /*finish=*/false);
  }  // closed without on_finish, as by a run that threw
  const TraceInfo info = read_trace_info(path.string());
  EXPECT_FALSE(info.complete);
  EXPECT_FALSE(info.summary.has_value());
  EXPECT_EQ(info.cycle_rows, 10);
  EXPECT_TRUE(contains(describe(info), "did not finish")) << describe(info);
}

std::vector<std::vector<std::string>> read_csv(const std::filesystem::path& path) {
  std::ifstream in(path);
  std::vector<std::vector<std::string>> rows;
  std::string line;
  while (std::getline(in, line)) {
    std::vector<std::string> fields;
    std::stringstream split(line);
    std::string field;
    while (std::getline(split, field, ',')) fields.push_back(field);
    rows.push_back(fields);
  }
  return rows;
}

double number(const std::string& text) {
  double value = 0.0;
  std::from_chars(text.data(), text.data() + text.size(), value);
  return value;
}

TEST(TraceFile, ExportsCsvWhoseNumbersReadBackToTheStoredDoubles) {
  const std::filesystem::path dir = output_dir();
  const std::string path = write_trace(dir / "run.h5", 12);
  const ExportResult result = export_csv(path, (dir / "csv").string());
  ASSERT_EQ(result.files.size(), 3u);

  const TraceFile trace(path);
  const WaveformBlock block = trace.read_waveforms(0, -1);
  const auto waves = read_csv(dir / "csv" / "waveforms.csv");
  ASSERT_EQ(waves.size(), block.rows() + 1);
  EXPECT_EQ(waves[0], (std::vector<std::string>{"time [s]", "out.v [V]", "L1.i [A]", "S1.i [A]"}));
  // Shortest round-trip text: std::to_chars guarantees from_chars gives the same double back
  // (ISO C++17 [charconv.to.chars]), so the comparison is exact.
  for (std::size_t r = 0; r < block.rows(); ++r) {
    ASSERT_EQ(waves[r + 1].size(), 4u);
    EXPECT_EQ(number(waves[r + 1][0]), block.time_s[r]);
    for (std::size_t k = 0; k < 3; ++k) EXPECT_EQ(number(waves[r + 1][k + 1]), block.value(r, k));
  }

  const auto cycles = read_csv(dir / "csv" / "cycles.csv");
  ASSERT_EQ(cycles.size(), 13u);
  EXPECT_EQ(cycles[0][0], "index");
  EXPECT_EQ(cycles[5][0], "4");
  EXPECT_EQ(cycles[5][2], "ccm");
  EXPECT_EQ(number(cycles[5][4]), SyntheticConverter{}.duty);  // D1

  const auto events = read_csv(dir / "csv" / "events.csv");
  ASSERT_EQ(events.size(), 1u + 36u);
  EXPECT_EQ(events[3][1], "forced_turn_on");
  EXPECT_EQ(events[3][2], "D1");
}

TEST(TraceFile, ExportsOnlyTheChosenSignalsAndTimeSpan) {
  const std::filesystem::path dir = output_dir();
  const std::string path = write_trace(dir / "run.h5", 12);
  ExportOptions options;
  options.signals = {"S1.i"};
  options.start_s = 2e-5;
  options.end_s = 4e-5;
  options.events = false;
  export_csv(path, (dir / "csv").string(), options);
  const auto waves = read_csv(dir / "csv" / "waveforms.csv");
  ASSERT_GT(waves.size(), 1u);
  EXPECT_EQ(waves[0], (std::vector<std::string>{"time [s]", "S1.i [A]"}));
  for (std::size_t r = 1; r < waves.size(); ++r) {
    EXPECT_GE(number(waves[r][0]), 2e-5);
    EXPECT_LE(number(waves[r][0]), 4e-5);
  }
  EXPECT_FALSE(std::filesystem::exists(dir / "csv" / "events.csv"));
}

TEST(TraceFile, ExportRejectsAnUnknownSignalListingTheKnownOnes) {
  const std::filesystem::path dir = output_dir();
  const std::string path = write_trace(dir / "run.h5", 3);
  ExportOptions options;
  options.signals = {"L2.i"};
  try {
    export_csv(path, (dir / "csv").string(), options);
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.element(), "L2.i");
    EXPECT_TRUE(contains(e.fix(), "out.v, L1.i, S1.i")) << e.what();
  }
}

TEST(ExportOptions, DefaultsValidate) { EXPECT_NO_THROW(ExportOptions{}.validate()); }

TEST(ExportOptions, RejectsAPrecisionAboveSeventeenDigits) {
  ExportOptions options;
  options.precision = 18;
  EXPECT_THROW(options.validate(), InputError);
}

}  // namespace
}  // namespace pulsewise
