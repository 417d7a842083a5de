// End-to-end tests of the `pulsewise` driver: exit codes (docs/exit-codes.md), messages that name
// file:line and element, every example in data/, the JSON summary (docs/summary-json.md), the
// trace commands, and the closed-form formulas behind `pulsewise verify`.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "exit_codes.hpp"
#include "verify.hpp"

namespace {

namespace fs = std::filesystem;
using pulsewise::app::Converter;

struct Outcome {
  int code = -1;
  std::string out;
  std::string err;
};

std::string slurp(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

std::string quote(const std::string& s) {
  std::string q = "'";
  for (char c : s) q += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return q + "'";
}

// A fresh scratch directory per test, under the build tree.
fs::path scratch() {
  const auto* info = testing::UnitTest::GetInstance()->current_test_info();
  const fs::path dir = fs::path(PULSEWISE_BINARY_DIR) / "driver-test" /
                       (std::string(info->test_suite_name()) + "." + info->name());
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

Outcome run_driver(const std::vector<std::string>& args, const fs::path& dir) {
  std::string command = quote(PULSEWISE_DRIVER_PATH);
  for (const std::string& a : args) command += " " + quote(a);
  const fs::path out = dir / "stdout.txt";
  const fs::path err = dir / "stderr.txt";
  command += " >" + quote(out.string()) + " 2>" + quote(err.string()) + " </dev/null";
  const int status = std::system(command.c_str());
  Outcome o;
  o.code = WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
  o.out = slurp(out);
  o.err = slurp(err);
  return o;
}

fs::path write_file(const fs::path& dir, const std::string& name, const std::string& text) {
  const fs::path path = dir / name;
  std::ofstream(path) << text;
  return path;
}

// A small valid boost converter in the circuit-file schema (docs/circuit-file.md); tests break
// one line of it at a time. Line numbers matter: the broken lines are named in the tests.
std::string boost_file() {
  return "[circuit]\n"                         // 1
         "name = \"driver-test boost\"\n"      // 2
         "[[voltage_source]]\n"                // 3
         "name = \"Vin\"\n"                    // 4
         "nodes = [\"in\", \"0\"]\n"           // 5
         "voltage = \"5 V\"\n"                 // 6
         "[[inductor]]\n"                      // 7
         "name = \"L1\"\n"                     // 8
         "nodes = [\"in\", \"sw\"]\n"          // 9
         "inductance = \"10 uH\"\n"            // 10
         "[[switch]]\n"                        // 11
         "name = \"S1\"\n"                     // 12
         "nodes = [\"sw\", \"0\"]\n"           // 13
         "gate = \"pwm1\"\n"                   // 14
         "on_resistance = \"10 mOhm\"\n"       // 15
         "[[diode]]\n"                         // 16
         "name = \"D1\"\n"                     // 17
         "nodes = [\"sw\", \"out\"]\n"         // 18
         "[[capacitor]]\n"                     // 19
         "name = \"C1\"\n"                     // 20
         "nodes = [\"out\", \"0\"]\n"          // 21
         "capacitance = \"47 uF\"\n"           // 22
         "[[resistor]]\n"                      // 23
         "name = \"Rload\"\n"                  // 24
         "nodes = [\"out\", \"0\"]\n"          // 25
         "resistance = \"50 Ohm\"\n"           // 26
         "[[pwm]]\n"                           // 27
         "name = \"pwm1\"\n"                   // 28
         "frequency = \"200 kHz\"\n"           // 29
         "duty = 0.4\n"                        // 30
         "[run]\n"                             // 31
         "periods = 300\n"                     // 32
         "output_signal = \"out.v\"\n"         // 33
         "[record]\n"                          // 34
         "signals = [\"out.v\", \"L1.i\"]\n";  // 35
}

std::string replace_line(const std::string& text, int line, const std::string& with) {
  std::istringstream in(text);
  std::string out, l;
  for (int n = 1; std::getline(in, l); ++n) out += (n == line ? with : l) + "\n";
  return out;
}

// The bad-input contract (docs/exit-codes.md): code 2, an "error:" line naming the file and line
// and the element, nothing on stdout, no trace file.
void expect_bad_input(const Outcome& o, const fs::path& file, int line,
                      const std::string& element) {
  EXPECT_EQ(o.code, pulsewise::app::kExitBadInput) << o.err;
  const std::string where = file.string() + ":" + std::to_string(line) + ":";
  EXPECT_NE(o.err.find(where), std::string::npos) << "expected " << where << " in: " << o.err;
  if (!element.empty()) {
    EXPECT_NE(o.err.find("'" + element + "'"), std::string::npos) << o.err;
  }
  EXPECT_EQ(o.out, "");
  EXPECT_FALSE(fs::exists(fs::path(file).replace_extension(".h5")));
}

std::vector<fs::path> data_files() {
  std::vector<fs::path> files;
  const fs::path data = fs::path(PULSEWISE_SOURCE_DIR) / "data";
  if (!fs::is_directory(data)) return files;
  for (const auto& entry : fs::directory_iterator(data)) {
    if (entry.path().extension() == ".toml") files.push_back(entry.path());
  }
  std::sort(files.begin(), files.end());
  return files;
}

// --- command line -------------------------------------------------------------------------

TEST(DriverCommandLine, RequiresASubcommandAndSaysSo) {
  const fs::path dir = scratch();
  const Outcome o = run_driver({}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitBadInput);
  EXPECT_NE(o.err.find("subcommand"), std::string::npos) << o.err;
}

TEST(DriverCommandLine, UnknownOptionIsBadInput) {
  const fs::path dir = scratch();
  const Outcome o = run_driver({"run", "--frobnicate", "x.toml"}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitBadInput);
  EXPECT_NE(o.err.find("frobnicate"), std::string::npos) << o.err;
}

TEST(DriverCommandLine, HelpOfEverySubcommandExitsZero) {
  const fs::path dir = scratch();
  for (const char* sub : {"run", "verify", "export", "info"}) {
    const Outcome o = run_driver({sub, "--help"}, dir);
    EXPECT_EQ(o.code, 0) << sub;
    EXPECT_NE(o.out.find("Usage"), std::string::npos) << sub << ": " << o.out;
  }
}

// --- run: bad input -----------------------------------------------------------------------

TEST(DriverRun, MissingCircuitFileIsBadInputNamingThePath) {
  const fs::path dir = scratch();
  const fs::path missing = dir / "no-such-circuit.toml";
  const Outcome o = run_driver({"run", missing.string()}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitBadInput);
  EXPECT_NE(o.err.find(missing.string()), std::string::npos) << o.err;
}

TEST(DriverRun, UnknownKeyNamesFileLineAndElement) {
  const fs::path dir = scratch();
  const fs::path file =
      write_file(dir, "bad.toml", replace_line(boost_file(), 10, "inductanse = \"10 uH\""));
  const Outcome o = run_driver({"run", file.string()}, dir);
  expect_bad_input(o, file, 10, "L1");
  EXPECT_NE(o.err.find("inductance"), std::string::npos) << "a suggestion: " << o.err;
}

TEST(DriverRun, WrongUnitNamesFileLineAndElement) {
  const fs::path dir = scratch();
  const fs::path file =
      write_file(dir, "bad.toml", replace_line(boost_file(), 22, "capacitance = \"47 uH\""));
  expect_bad_input(run_driver({"run", file.string()}, dir), file, 22, "C1");
}

TEST(DriverRun, NegativeResistanceNamesFileLineAndElement) {
  const fs::path dir = scratch();
  const fs::path file =
      write_file(dir, "bad.toml", replace_line(boost_file(), 26, "resistance = \"-50 Ohm\""));
  expect_bad_input(run_driver({"run", file.string()}, dir), file, 26, "Rload");
}

TEST(DriverRun, UnknownGateNamesFileLineAndElement) {
  const fs::path dir = scratch();
  const fs::path file =
      write_file(dir, "bad.toml", replace_line(boost_file(), 14, "gate = \"pwm9\""));
  const Outcome o = run_driver({"run", file.string()}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitBadInput) << o.err;
  EXPECT_NE(o.err.find(file.string() + ":"), std::string::npos) << o.err;
  EXPECT_NE(o.err.find("'S1'"), std::string::npos) << o.err;
}

TEST(DriverRun, TomlSyntaxErrorNamesFileAndLine) {
  const fs::path dir = scratch();
  const fs::path file = write_file(dir, "bad.toml", replace_line(boost_file(), 30, "duty = = 0.4"));
  expect_bad_input(run_driver({"run", file.string()}, dir), file, 30, "");
}

TEST(DriverRun, UnknownRecordedSignalNamesFileAndLine) {
  const fs::path dir = scratch();
  const fs::path file =
      write_file(dir, "bad.toml", replace_line(boost_file(), 35, "signals = [\"nowhere.v\"]"));
  expect_bad_input(run_driver({"run", file.string()}, dir), file, 35, "");
}

TEST(DriverRun, FloatingNodeIsBadInputNamingTheElement) {
  const fs::path dir = scratch();
  // The load hangs from a node nothing else touches.
  const fs::path file =
      write_file(dir, "bad.toml", replace_line(boost_file(), 25, "nodes = [\"island\", \"0\"]"));
  const Outcome o = run_driver({"run", file.string()}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitBadInput) << o.err;
  EXPECT_NE(o.err.find("'Rload'"), std::string::npos) << o.err;
  EXPECT_NE(o.err.find(file.string() + ":"), std::string::npos) << o.err;
}

TEST(DriverRun, EmptyAndBinaryFilesAreBadInputNotCrashes) {
  const fs::path dir = scratch();
  const fs::path empty = write_file(dir, "empty.toml", "");
  const fs::path binary = write_file(dir, "binary.toml", std::string("\x00\xff\xfe\x01[[", 6));
  for (const fs::path& f : {empty, binary}) {
    const Outcome o = run_driver({"run", f.string()}, dir);
    EXPECT_EQ(o.code, pulsewise::app::kExitBadInput) << f << ": " << o.err;
    EXPECT_NE(o.err.find("error:"), std::string::npos) << o.err;
  }
}

TEST(DriverRun, TraceIntoMissingDirectoryIsBadInput) {
  const fs::path dir = scratch();
  const fs::path file = write_file(dir, "boost.toml", boost_file());
  const Outcome o = run_driver({"run", file.string(), "-o", (dir / "nope" / "t.h5").string()}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitBadInput) << o.err;
  EXPECT_NE(o.err.find("nope"), std::string::npos) << o.err;
}

TEST(DriverRun, TraceThatCannotBeWrittenIsAnIoError) {
  const fs::path dir = scratch();
  const fs::path file = write_file(dir, "boost.toml", boost_file());
  // /proc refuses new files even for root.
  const Outcome o = run_driver({"run", file.string(), "-o", "/proc/pulsewise-test.h5"}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitIoError) << o.err;
  EXPECT_NE(o.err.find("/proc/pulsewise-test.h5"), std::string::npos) << o.err;
}

// --- run: good input ----------------------------------------------------------------------

TEST(DriverRun, JsonSummaryParsesAndFollowsTheDocumentedSchema) {
  const fs::path dir = scratch();
  const fs::path file = write_file(dir, "boost.toml", boost_file());
  const fs::path trace = dir / "boost.h5";
  const Outcome o = run_driver({"run", file.string(), "-o", trace.string(), "--json"}, dir);
  ASSERT_EQ(o.code, 0) << o.err;
  const nlohmann::json j = nlohmann::json::parse(o.out);  // throws, failing the test, if not JSON
  EXPECT_EQ(j.at("format"), "pulsewise-run-summary");
  EXPECT_EQ(j.at("format_version"), 1);
  EXPECT_EQ(j.at("ok"), true);
  EXPECT_EQ(j.at("cycles"), 300);
  EXPECT_EQ(j.at("trace_file"), trace.string());
  EXPECT_NEAR(j.at("switching_period_s").get<double>(), 5e-6, 1e-18);
  const auto& signals = j.at("last_cycle").at("signals");
  ASSERT_EQ(signals.size(), 2u);
  EXPECT_EQ(signals[0].at("name"), "out.v");
  EXPECT_EQ(signals[0].at("unit"), "V");
  EXPECT_EQ(signals[1].at("unit"), "A");
  for (const char* key : {"average", "rms", "min", "max", "peak_to_peak"}) {
    EXPECT_TRUE(signals[0].at(key).is_number()) << key;
  }
  // RMS >= |average| and min <= average <= max hold for any signal (Cauchy-Schwarz; common
  // practice, no source): a check that the statistics are wired, not what they are.
  const auto& v = signals[0];
  EXPECT_GE(v.at("rms").get<double>(), std::abs(v.at("average").get<double>()) * (1 - 1e-12));
  EXPECT_LE(v.at("min").get<double>(), v.at("average").get<double>());
  EXPECT_GE(v.at("max").get<double>(), v.at("average").get<double>());
  EXPECT_TRUE(j.at("startup").at("peak_inductor_current_a").contains("L1"));
  EXPECT_TRUE(fs::exists(trace));
}

// The engine replays and repeats periods only when no observer listens. The driver attaches
// none without a trace file (and off a terminal), so such a run takes its recurring periods
// from the earlier ones, while a traced run computes every period for the trace. Both must
// report the same last period (the repeat is exact; docs/method.md, section 5).
TEST(DriverRun, AnUntracedRunRepeatsItsRecurringPeriodsAndAgreesWithTheTracedRun) {
  const fs::path dir = scratch();
  const std::string text =
      replace_line(replace_line(boost_file(), 22, "capacitance = \"10 uF\""), 32, "periods = 3000");
  const fs::path file = write_file(dir, "boost.toml", text);
  const Outcome traced =
      run_driver({"run", file.string(), "-o", (dir / "boost.h5").string(), "--json"}, dir);
  const Outcome untraced = run_driver({"run", file.string(), "--no-trace", "--json"}, dir);
  ASSERT_EQ(traced.code, 0) << traced.err;
  ASSERT_EQ(untraced.code, 0) << untraced.err;
  const nlohmann::json a = nlohmann::json::parse(traced.out);
  const nlohmann::json b = nlohmann::json::parse(untraced.out);
  EXPECT_EQ(a.at("repeated_periods"), 0);
  EXPECT_EQ(a.at("recurrence_periods"), 0);
  const long repeated = b.at("repeated_periods").get<long>();
  EXPECT_GE(repeated, 500);  // the states recur to the bit well before period 3 000
  EXPECT_GE(b.at("recurrence_periods").get<long>(), 1);
  EXPECT_EQ(a.at("cycles"), b.at("cycles"));
  EXPECT_EQ(a.at("events"), b.at("events"));
  const auto& sa = a.at("last_cycle").at("signals");
  const auto& sb = b.at("last_cycle").at("signals");
  ASSERT_EQ(sa.size(), sb.size());
  for (std::size_t k = 0; k < sa.size(); ++k)
    for (const char* key : {"average", "rms", "min", "max"}) {
      const double x = sa[k].at(key).get<double>(), y = sb[k].at(key).get<double>();
      EXPECT_NEAR(x, y, 1e-12 * std::max(std::abs(x), 1.0)) << sa[k].at("name") << " " << key;
    }
  const std::string text_out = run_driver({"run", file.string(), "--no-trace"}, dir).out;
  EXPECT_NE(
      text_out.find("states recur to the last bit from period " + std::to_string(3000 - repeated)),
      std::string::npos)
      << text_out;
}

// Two independent routes to the same powers: the engine integrates v * i of every element over
// the period (power.load_w, power.losses_w), while the exact per-period RMS of a recorded signal
// gives the same figure through Joule's law, P = V_rms^2 / R for the load across out.v and
// P = I_rms^2 R_on for the switch (common practice, no source). And energy is conserved
// (Tellegen's theorem): input = load + losses + change of stored energy per period.
TEST(DriverRun, LossSplitAgreesWithJoulesLawAndClosesTheEnergyBalance) {
  const fs::path dir = scratch();
  const fs::path file = write_file(
      dir, "boost.toml", replace_line(boost_file(), 35, "signals = [\"out.v\", \"S1.i\"]"));
  const Outcome o = run_driver({"run", file.string(), "--json", "--no-trace"}, dir);
  ASSERT_EQ(o.code, 0) << o.err;
  const nlohmann::json j = nlohmann::json::parse(o.out);
  const auto& p = j.at("power");
  const auto& signals = j.at("last_cycle").at("signals");
  ASSERT_EQ(signals[0].at("name"), "out.v");
  ASSERT_EQ(signals[1].at("name"), "S1.i");
  const double v_rms = signals[0].at("rms").get<double>();
  const double i_rms = signals[1].at("rms").get<double>();
  const double load = p.at("load_w").get<double>();
  const double switch_loss = p.at("losses_w").at("S1").get<double>();
  std::printf("load %.12g W vs V_rms^2/R %.12g W; S1 %.12g W vs I_rms^2 R_on %.12g W\n", load,
              v_rms * v_rms / 50.0, switch_loss, i_rms * i_rms * 10e-3);
  // 1e-9 relative: both are exact integrals, differing only by round-off.
  EXPECT_NEAR(load, v_rms * v_rms / 50.0, 1e-9 * load);
  EXPECT_NEAR(switch_loss, i_rms * i_rms * 10e-3, 1e-9 * switch_loss);

  const double input = p.at("input_w").get<double>();
  double losses = 0.0;
  for (const auto& [name, w] : p.at("losses_w").items()) losses += w.get<double>();
  const double stored_w = j.at("last_cycle").at("stored_energy_change_j").get<double>() / 5e-6;
  const double residual = input - load - losses - stored_w;
  std::printf("input %.12g W, residual of the balance %.3g W\n", input, residual);
  EXPECT_NEAR(residual, 0.0, 1e-9 * input);
  EXPECT_NEAR(p.at("efficiency").get<double>(), load / input, 1e-12);
}

TEST(DriverRun, TextSummaryNamesModeSignalsAndTraceFile) {
  const fs::path dir = scratch();
  const fs::path file = write_file(dir, "boost.toml", boost_file());
  const Outcome o = run_driver({"run", file.string()}, dir);
  ASSERT_EQ(o.code, 0) << o.err;
  for (const char* text : {"out.v", "L1.i", "D1 ", "average", "rms", "p-p", "boost.h5"}) {
    EXPECT_NE(o.out.find(text), std::string::npos) << text << " in:\n" << o.out;
  }
  // Default trace path: beside the input, .h5 (issue 3, section 2).
  EXPECT_TRUE(fs::exists(dir / "boost.h5"));
  // stderr is not a terminal here: no progress line.
  EXPECT_EQ(o.err, "");
}

TEST(DriverRun, EveryExampleInDataRunsAndSucceeds) {
  const std::vector<fs::path> files = data_files();
  ASSERT_GE(files.size(), 4u) << "issue 3 asks for at least four examples in data/";
  for (const fs::path& file : files) {
    const fs::path dir = scratch() / file.stem();
    fs::create_directories(dir);
    const fs::path trace = dir / (file.stem().string() + ".h5");
    const Outcome o = run_driver({"run", file.string(), "-o", trace.string(), "--json"}, dir);
    EXPECT_EQ(o.code, 0) << file << ":\n" << o.err << o.out.substr(0, 2000);
    if (o.code != 0) continue;
    const nlohmann::json j = nlohmann::json::parse(o.out);
    EXPECT_EQ(j.at("ok"), true) << file;
    EXPECT_GT(j.at("cycles").get<long>(), 0) << file;
    EXPECT_TRUE(fs::exists(trace)) << file;
  }
}

// A switch that opens an inductor current with no freewheeling path is a circuit the engine can
// run but not continue (an ideal switch would need an infinite voltage): the run ends abnormally,
// exit code 3, and the summary names the switch and the inductor (docs/exit-codes.md).
TEST(DriverRun, InterruptedInductorCurrentEndsTheRunWithCodeThree) {
  const fs::path dir = scratch();
  const fs::path file = write_file(dir, "interrupt.toml",
                                   "[[voltage_source]]\nname = \"Vin\"\nnodes = [\"in\", \"0\"]\n"
                                   "voltage = \"5 V\"\n[[inductor]]\nname = \"L1\"\n"
                                   "nodes = [\"in\", \"sw\"]\ninductance = \"10 uH\"\n"
                                   "[[switch]]\nname = \"S1\"\nnodes = [\"sw\", \"0\"]\n"
                                   "gate = \"pwm1\"\non_resistance = \"10 mOhm\"\n"
                                   "[[pwm]]\nname = \"pwm1\"\nfrequency = \"200 kHz\"\n"
                                   "duty = 0.4\n[run]\nperiods = 10\n");
  const Outcome o = run_driver({"run", file.string(), "--json"}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitAbnormalEnd) << o.err << o.out;
  const nlohmann::json j = nlohmann::json::parse(o.out);
  EXPECT_EQ(j.at("ok"), false);
  const std::string message = j.at("message");
  EXPECT_NE(message.find("'S1'"), std::string::npos) << message;
  EXPECT_NE(message.find("'L1'"), std::string::npos) << message;
  // The trace up to the stop is still written and readable.
  EXPECT_EQ(run_driver({"info", (dir / "interrupt.h5").string()}, dir).code, 0);
}

// --- trace commands -----------------------------------------------------------------------

TEST(DriverTraces, InfoAndExportReadWhatRunWrote) {
  const fs::path dir = scratch();
  const fs::path file = write_file(dir, "boost.toml", boost_file());
  const fs::path trace = dir / "boost.h5";
  ASSERT_EQ(run_driver({"run", file.string(), "-o", trace.string(), "-q"}, dir).code, 0);

  const Outcome info = run_driver({"info", trace.string(), "--json"}, dir);
  ASSERT_EQ(info.code, 0) << info.err;
  const nlohmann::json j = nlohmann::json::parse(info.out);
  EXPECT_EQ(j.at("complete"), true);
  ASSERT_EQ(j.at("signals").size(), 2u);
  EXPECT_EQ(j.at("signals")[0].at("name"), "out.v");
  EXPECT_EQ(j.at("cycle_rows"), 300);

  const fs::path csv = dir / "csv";
  const Outcome exp = run_driver({"export", trace.string(), "-d", csv.string()}, dir);
  ASSERT_EQ(exp.code, 0) << exp.err;
  for (const char* name : {"waveforms.csv", "cycles.csv"}) {
    ASSERT_TRUE(fs::exists(csv / name)) << name;
    std::ifstream in(csv / name);
    std::string header;
    std::getline(in, header);
    EXPECT_NE(header.find("out.v"), std::string::npos) << name << ": " << header;
  }
}

TEST(DriverTraces, InfoOnAFileThatIsNotATraceIsBadInput) {
  const fs::path dir = scratch();
  const fs::path fake = write_file(dir, "fake.h5", "this is not HDF5\n");
  for (const char* sub : {"info", "export"}) {
    const Outcome o = run_driver({sub, fake.string()}, dir);
    EXPECT_EQ(o.code, pulsewise::app::kExitBadInput) << sub << ": " << o.err;
    EXPECT_NE(o.err.find(fake.string()), std::string::npos) << o.err;
  }
  const Outcome missing = run_driver({"info", (dir / "missing.h5").string()}, dir);
  EXPECT_EQ(missing.code, pulsewise::app::kExitBadInput) << missing.err;
}

// --- verify -------------------------------------------------------------------------------

TEST(DriverVerify, OnePointAgreesWithTheBookFormulaAndExitsZero) {
  const fs::path dir = scratch();
  const Outcome o =
      run_driver({"verify", "--converter", "boost", "--duty", "0.3", "--k", "0.05", "--json"}, dir);
  ASSERT_EQ(o.code, 0) << o.err << o.out;
  const nlohmann::json j = nlohmann::json::parse(o.out);
  ASSERT_EQ(j.at("rows").size(), 1u);
  const auto& row = j.at("rows")[0];
  // Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed., ch. 5: boost in DCM,
  // M = (1 + sqrt(1 + 4 D^2 / K)) / 2, written out here independently of apps/verify.cpp.
  const double expected = (1.0 + std::sqrt(1.0 + 4.0 * 0.09 / 0.05)) / 2.0;
  const double simulated = row.at("ratio_simulated").get<double>();
  // 0.2 %: the ripple-limited tolerance of `verify` (output ripple < 0.5 %).
  EXPECT_NEAR(simulated, expected, 2e-3 * expected);
  EXPECT_EQ(row.at("mode_simulated"), "DCM");
  std::printf("boost D=0.3 K=0.05: M simulated %.8f, closed form %.8f, error %.2e\n", simulated,
              expected, std::abs(simulated - expected) / expected);
}

TEST(DriverVerify, TablePrintsTheSourcesUnderIt) {
  const fs::path dir = scratch();
  const Outcome o = run_driver({"verify", "--converter", "buck", "--duty", "0.5", "--k", "2"}, dir);
  ASSERT_EQ(o.code, 0) << o.err << o.out;
  EXPECT_NE(o.out.find("Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed."),
            std::string::npos);
  EXPECT_NE(o.out.find("pass"), std::string::npos);
}

TEST(DriverVerify, DutyOutsideZeroOneIsBadInput) {
  const fs::path dir = scratch();
  for (const char* duty : {"1.5", "0", "-0.2"}) {
    const Outcome o = run_driver({"verify", "--duty", duty}, dir);
    EXPECT_EQ(o.code, pulsewise::app::kExitBadInput) << duty << ": " << o.err;
    EXPECT_NE(o.err.find("--duty"), std::string::npos) << o.err;
  }
  const Outcome k = run_driver({"verify", "--k", "-1"}, dir);
  EXPECT_EQ(k.code, pulsewise::app::kExitBadInput) << k.err;
  const Outcome conv = run_driver({"verify", "--converter", "flyback"}, dir);
  EXPECT_EQ(conv.code, pulsewise::app::kExitBadInput) << conv.err;
}

// A point that cannot reach steady state within the period cap must fail with the reason,
// exit code 4, rather than pass on a transient.
TEST(DriverVerify, PointWithoutSteadyStateFailsWithTheReason) {
  const fs::path dir = scratch();
  const Outcome o = run_driver(
      {"verify", "--converter", "buck", "--duty", "0.5", "--k", "2", "--max-periods", "20"}, dir);
  EXPECT_EQ(o.code, pulsewise::app::kExitVerifyFailed) << o.out;
  EXPECT_NE(o.out.find("FAIL"), std::string::npos) << o.out;
  EXPECT_NE(o.out.find("steady state"), std::string::npos) << o.out;
}

// --- closed forms (apps/verify.hpp) -------------------------------------------------------

// Erickson & Maksimovic, 2nd ed., ch. 5: at K = K_crit the DCM ratio equals the CCM ratio (the
// mode boundary). A wrong formula or a wrong K_crit breaks this continuity.
TEST(ClosedForm, DcmRatioMeetsCcmRatioAtTheCriticalK) {
  for (Converter c : {Converter::kBuck, Converter::kBoost, Converter::kBuckBoost}) {
    for (double d : {0.1, 0.3, 0.5, 0.7, 0.9}) {
      const double k = pulsewise::app::critical_k(c, d);
      const double ccm = pulsewise::app::ccm_ratio(c, d);
      const double dcm = pulsewise::app::dcm_ratio(c, d, k);
      // 16 epsilon: a few roundings in sqrt and division.
      EXPECT_NEAR(dcm, ccm, 16 * std::numeric_limits<double>::epsilon() * std::abs(ccm))
          << pulsewise::app::to_string(c) << " D=" << d;
    }
  }
}

// Same book, ch. 5: in DCM the ratio exceeds the CCM ratio in magnitude (less inductor current
// means the output rises at light load), and it approaches the CCM value as K -> K_crit.
TEST(ClosedForm, DcmRatioExceedsCcmRatioBelowTheCriticalK) {
  for (Converter c : {Converter::kBuck, Converter::kBoost, Converter::kBuckBoost}) {
    const double d = 0.4;
    const double k = 0.5 * pulsewise::app::critical_k(c, d);
    EXPECT_GT(std::abs(pulsewise::app::dcm_ratio(c, d, k)),
              std::abs(pulsewise::app::ccm_ratio(c, d)))
        << pulsewise::app::to_string(c);
    EXPECT_FALSE(pulsewise::app::ccm_expected(c, d, k));
    EXPECT_TRUE(pulsewise::app::ccm_expected(c, d, 2.0 * pulsewise::app::critical_k(c, d)));
  }
}

// Points worked by hand from the formulas of Erickson & Maksimovic, 2nd ed., ch. 2 and ch. 5:
// buck D=0.5, K=0.125: M = 2/(1+sqrt(1+4*0.125/0.25)) = 2/(1+sqrt 3); boost D=0.5, K=0.0625:
// M = (1+sqrt(1+4*0.25/0.0625))/2 = (1+sqrt 17)/2; buck-boost D=0.5, K=0.0625: M = -0.5/0.25 = -2.
TEST(ClosedForm, DcmRatiosMatchHandComputedPoints) {
  EXPECT_DOUBLE_EQ(pulsewise::app::dcm_ratio(Converter::kBuck, 0.5, 0.125),
                   2.0 / (1.0 + std::sqrt(3.0)));
  EXPECT_DOUBLE_EQ(pulsewise::app::dcm_ratio(Converter::kBoost, 0.5, 0.0625),
                   (1.0 + std::sqrt(17.0)) / 2.0);
  EXPECT_DOUBLE_EQ(pulsewise::app::dcm_ratio(Converter::kBuckBoost, 0.5, 0.0625), -2.0);
  EXPECT_DOUBLE_EQ(pulsewise::app::ccm_ratio(Converter::kBoost, 0.75), 4.0);
  EXPECT_DOUBLE_EQ(pulsewise::app::ccm_ratio(Converter::kBuckBoost, 0.75), -3.0);
}

// The grid straddles the boundary: every converter and duty has points on both sides, each more
// than 5 % away from K_crit so that the mode is checked at every row.
TEST(ClosedForm, DefaultGridCoversBothModesAwayFromTheBoundary) {
  const auto points = pulsewise::app::verify_points({});
  EXPECT_EQ(points.size(), 36u);
  int ccm = 0, dcm = 0;
  for (const auto& p : points) {
    const double ratio = p.k / pulsewise::app::critical_k(p.converter, p.duty);
    EXPECT_GT(std::abs(ratio - 1.0), 0.05);
    (ratio > 1.0 ? ccm : dcm)++;
  }
  EXPECT_EQ(ccm, 18);
  EXPECT_EQ(dcm, 18);
}

}  // namespace
