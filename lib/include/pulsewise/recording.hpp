// What a trace recorder should keep: which stretches of time (windows) get waveforms, how densely
// they are sampled, and how often the file is flushed. Shared by the circuit-file loader and the
// recorders so that the core library carries no file-format dependency.
#pragma once

#include <string>
#include <utility>
#include <vector>

namespace pulsewise {

struct RecordingWindow {
  double start_s = 0.0;  // window start, s
  double end_s = 0.0;    // window end, s (> start_s)
};

struct RecordingOptions {
  // Waveforms are kept inside these windows only. Empty: the whole run.
  std::vector<RecordingWindow> windows;
  // Uniform samples per switching period inside a window, in addition to every event instant.
  int samples_per_period = 64;
  bool record_events = true;        // keep the event log
  bool record_cycles = true;        // keep the per-cycle table
  long flush_every_periods = 1000;  // flush the file at least this often, periods
  std::string output_path;          // trace file; empty: beside the circuit file

  // Throws InputError (kInvalidOption) naming the field and the fix.
  void validate() const;
};

}  // namespace pulsewise
