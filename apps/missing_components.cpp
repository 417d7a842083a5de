// Stand-ins for `run`, `export` and `info` in a build without the circuit-file loader or the
// HDF5 recorder (-DPULSEWISE_WITH_HDF5=OFF): they say what is missing instead of failing to link.
#include "commands.hpp"
#include "exit_codes.hpp"

namespace pulsewise::app {
namespace {
[[noreturn]] void missing(const char* command) {
  throw UsageError(std::string(command) +
                   ": this pulsewise was built without the circuit-file loader or the HDF5 "
                   "recorder; rebuild with -DPULSEWISE_WITH_HDF5=ON and libtomlplusplus-dev, "
                   "libhdf5-dev installed");
}
}  // namespace

void RunCommandOptions::validate() const {}
int run_command(const RunCommandOptions&) { missing("run"); }
int export_command(const ExportCommandOptions&) { missing("export"); }
int info_command(const InfoCommandOptions&) { missing("info"); }

}  // namespace pulsewise::app
