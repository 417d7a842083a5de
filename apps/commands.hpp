// The driver's subcommands. Each takes its options struct (in-class defaults, validate()) and
// returns an exit code from exit_codes.hpp; errors are thrown as InputError (bad input),
// UsageError (bad command line), IoError (file system) and mapped to exit codes in main.cpp.
#pragma once

#include <optional>
#include <string>

#include "verify.hpp"

namespace pulsewise::app {

struct RunCommandOptions {
  std::string circuit_path;     // the circuit file (TOML)
  std::string trace_path;       // -o: trace file; empty: [record] file, else FILE.h5
  bool write_trace = true;      // false with --no-trace
  bool json = false;            // print the summary as JSON on stdout
  bool quiet = false;           // no progress line
  std::optional<long> periods;  // --periods: overrides [run] periods
  void validate() const;        // throws UsageError
};

struct VerifyCommandOptions {
  VerifyOptions verify;
  bool json = false;   // print the rows as JSON instead of the table
  bool quiet = false;  // no progress line
};

struct ExportCommandOptions {
  std::string trace_path;  // the trace file to read
  std::string out_dir;     // where the CSV files go; empty: beside the trace file
  bool quiet = false;      // do not list the files written
};

struct InfoCommandOptions {
  std::string trace_path;
  bool json = false;
};

int run_command(const RunCommandOptions& options);
int verify_command(const VerifyCommandOptions& options);
int export_command(const ExportCommandOptions& options);
int info_command(const InfoCommandOptions& options);

}  // namespace pulsewise::app
