// pulsewise: the driver program. It parses the command line, calls the library and maps every
// outcome to an exit code (docs/exit-codes.md). See `pulsewise --help`.
#include <fmt/core.h>

#include <CLI/CLI.hpp>
#include <exception>
#include <functional>
#include <new>
#include <string>

#include "commands.hpp"
#include "exit_codes.hpp"
#include "pulsewise/error.hpp"
#include "pulsewise/version.hpp"

namespace {

using namespace pulsewise::app;

void add_run(CLI::App& app, RunCommandOptions& o, std::function<int()>& action) {
  CLI::App* run =
      app.add_subcommand("run", "Simulate a circuit file, print the summary, write traces");
  run->add_option("FILE", o.circuit_path, "Circuit file (TOML, see docs/circuit-file.md)")
      ->required();
  run->add_option("-o,--output", o.trace_path,
                  "Trace file to write (default: the file's [record] file, else FILE with .h5)");
  run->add_flag_callback(
      "--no-trace", [&o]() { o.write_trace = false; }, "Do not write a trace file");
  run->add_option("--periods", o.periods, "Simulate this many periods instead of [run] periods");
  run->add_flag("--json", o.json, "Print the summary as JSON on stdout (docs/summary-json.md)");
  run->add_flag("-q,--quiet", o.quiet, "No progress line on stderr");
  run->callback([&]() { action = [&o]() { return run_command(o); }; });
}

void add_verify(CLI::App& app, VerifyCommandOptions& o, std::string& converter,
                std::function<int()>& action) {
  CLI::App* verify = app.add_subcommand(
      "verify", "Check simulated buck, boost and buck-boost converters against closed forms");
  verify->add_option("--converter", converter, "Only this converter: buck, boost or buck-boost")
      ->check(CLI::IsMember({"buck", "boost", "buck-boost"}));
  verify->add_option("--duty", o.verify.duty, "Only this duty cycle D, 0 < D < 1");
  verify->add_option("--k", o.verify.k, "Only this K = 2L/(R Ts), K > 0");
  verify->add_option("--max-periods", o.verify.max_periods,
                     "Most periods simulated per point while waiting for steady state");
  verify->add_flag("--json", o.json, "Print the rows as JSON on stdout");
  verify->add_flag("-q,--quiet", o.quiet, "No progress line on stderr");
  verify->callback([&]() {
    if (!converter.empty()) o.verify.converter = parse_converter(converter);
    action = [&o]() { return verify_command(o); };
  });
}

void add_export(CLI::App& app, ExportCommandOptions& o, std::function<int()>& action) {
  CLI::App* exp = app.add_subcommand("export", "Write the waveforms and per-cycle table as CSV");
  exp->add_option("TRACES", o.trace_path, "Trace file (.h5) written by `pulsewise run`")
      ->required();
  exp->add_option("-d,--dir", o.out_dir, "Directory for the CSV files (default: beside TRACES)");
  exp->add_flag("-q,--quiet", o.quiet, "Do not list the files written");
  exp->callback([&]() { action = [&o]() { return export_command(o); }; });
}

void add_info(CLI::App& app, InfoCommandOptions& o, std::function<int()>& action) {
  CLI::App* info = app.add_subcommand("info", "Say what a trace file holds");
  info->add_option("TRACES", o.trace_path, "Trace file (.h5) written by `pulsewise run`")
      ->required();
  info->add_flag("--json", o.json, "Print as JSON on stdout");
  info->callback([&]() { action = [&o]() { return info_command(o); }; });
}

int dispatch(const std::function<int()>& action) {
  try {
    return action();
  } catch (const pulsewise::InputError& e) {
    fmt::print(stderr, "error: {}\n", e.what());
    return kExitBadInput;
  } catch (const UsageError& e) {
    fmt::print(stderr, "error: {}\n", e.what());
    return kExitBadInput;
  } catch (const IoError& e) {
    fmt::print(stderr, "error: {}\n", e.what());
    return kExitIoError;
  } catch (const std::bad_alloc&) {
    fmt::print(stderr, "error: out of memory\n");
    return kExitInternalError;
  } catch (const std::exception& e) {
    fmt::print(stderr,
               "internal error: {}\n(this is a bug in pulsewise; please report it with the "
               "input that caused it)\n",
               e.what());
    return kExitInternalError;
  }
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"pulsewise: cycle-by-cycle exact simulation of switched power converters"};
  app.set_version_flag("--version", std::string("pulsewise ") + pulsewise::kVersion);
  app.require_subcommand(1);
  app.footer(
      "Exit codes: 0 ok, 1 internal error, 2 bad input, 3 run ended abnormally,\n"
      "4 verify found a row out of tolerance, 5 file could not be read or written.");

  std::function<int()> action;
  RunCommandOptions run_options;
  VerifyCommandOptions verify_options;
  std::string converter;
  ExportCommandOptions export_options;
  InfoCommandOptions info_options;
  add_run(app, run_options, action);
  add_verify(app, verify_options, converter, action);
  add_export(app, export_options, action);
  add_info(app, info_options, action);

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);  // prints help, version or the parse error
    return code == 0 ? kExitOk : kExitBadInput;
  }
  return dispatch(action);
}
