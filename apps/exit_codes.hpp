// Exit codes of the `pulsewise` driver; documented in docs/exit-codes.md and the README.
#pragma once

#include <stdexcept>
#include <string>

namespace pulsewise::app {

enum ExitCode : int {
  kExitOk = 0,             // the command did what was asked
  kExitInternalError = 1,  // a bug: an unexpected exception escaped (please report it)
  kExitBadInput = 2,       // bad command line, circuit file, circuit or option; nothing was run
  kExitAbnormalEnd = 3,    // the simulation ran but ended abnormally (see the summary's message)
  kExitVerifyFailed = 4,   // `verify`: at least one row is outside its tolerance
  kExitIoError = 5,        // a file could not be read or written (permissions, disk, HDF5)
};

// A file could not be read or written although the request itself was sound.
class IoError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Bad command-line input found by the driver itself (not by the library): a path that does not
// exist, a file of the wrong kind, options that contradict each other.
class UsageError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

}  // namespace pulsewise::app
