// The HDF5 trace recorder: an Observer that streams a run into a trace file (layout in
// docs/trace-file.md). It keeps the run's metadata, the waveforms of the recorded signals inside
// the recording windows (every piece boundary plus a uniform grid of samples per period), the
// per-cycle table, the event log and, when the run ends, its summary.
//
//   pulsewise::Hdf5Recorder recorder("run.h5", recording, metadata);
//   pulsewise::RunSummary summary = simulation.run(&recorder);
//   recorder.close();  // throws if a write failed during the run
//
// Memory stays bounded for any run length: rows are buffered up to Hdf5Options::buffer_bytes and
// then written. The file is written and flushed together, at least every
// RecordingOptions::flush_every_periods periods and whenever the buffer is full, and is left
// untouched in between, so a run that is killed leaves a readable file holding every flushed
// period. The HDF5 library is not thread-safe here: use one recorder at a time per process.
#pragma once

#include <cstddef>
#include <functional>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "pulsewise/observer.hpp"
#include "pulsewise/recording.hpp"
#include "pulsewise/version.hpp"

namespace pulsewise {

// Where a run came from; stored as attributes of the file's root group.
struct TraceMetadata {
  std::string program_version = kVersion;  // version of the program writing the file
  std::string circuit_name;                // the circuit's name
  std::string circuit_file;                // path of the circuit file; empty: built in C++
  std::string circuit_text;                // full text of the circuit file; empty: none
  std::string run_settings;                // the run settings as text, for a person to read
  // The run settings as key = value pairs, one string attribute each in /settings.
  std::vector<std::pair<std::string, std::string>> settings;
};

// File-level knobs of the HDF5 recorder (RecordingOptions says what to record).
struct Hdf5Options {
  // Most memory the recorder's own row buffers may hold, bytes, >= 64 KiB. Reaching it writes and
  // flushes the file early.
  std::size_t buffer_bytes = std::size_t{4} << 20;
  // Target size of one dataset chunk before compression, bytes, 4 KiB .. 1 MiB (the HDF5 chunk
  // cache holds 1 MiB per dataset).
  std::size_t chunk_bytes = std::size_t{128} << 10;
  // Deflate level 0 (off) .. 9. Level 1 is the fast end: on smooth converter waveforms it gets
  // within about 10 % of level 4's file size in about 70 % of the time.
  int deflate_level = 1;

  // Throws InputError (kInvalidOption) naming the field and the fix.
  void validate() const;
};

// How far the file is written; handed to the flush listener after each flush.
struct RecorderProgress {
  long flushes = 0;              // flushes made so far
  long cycles_flushed = 0;       // complete switching periods held by the file
  double flushed_until_s = 0.0;  // waveforms and events are complete up to this time, s
  long waveform_rows = 0;        // rows in the file
  long cycle_rows = 0;
  long event_rows = 0;
  std::size_t peak_buffered_bytes = 0;  // most memory the row buffers have held, bytes
};

class Hdf5Recorder : public Observer {
 public:
  // Validates the options and creates the file (replacing one of the same name). Throws
  // InputError naming the file when the options are invalid or the file cannot be created.
  Hdf5Recorder(std::string path, RecordingOptions recording, TraceMetadata metadata = {},
               Hdf5Options options = {});
  // Closes the file if close() was not called; never throws. A file closed without on_finish
  // keeps complete = 0.
  ~Hdf5Recorder() override;
  Hdf5Recorder(const Hdf5Recorder&) = delete;
  Hdf5Recorder& operator=(const Hdf5Recorder&) = delete;

  // Observer callbacks. They never throw: a failed write stops the recording and is reported by
  // ok(), error() and close().
  void on_start(const RunInfo& info) override;
  void on_piece(const PieceView& piece) override;
  void on_event(const EventRecord& event) override;
  void on_cycle(const CycleMetrics& cycle) override;
  // Writes the summary, marks the file complete and closes it.
  void on_finish(const RunSummary& summary) override;

  // Writes what is buffered and flushes the file now.
  void flush();
  // Flushes and closes the file (once; later calls only report). Throws std::runtime_error
  // naming the file if any write failed.
  void close();

  bool ok() const;
  const std::string& error() const;  // empty while ok()
  const std::string& path() const;
  RecorderProgress progress() const;
  // Called after every flush, e.g. to show progress or to know what a kill would keep.
  void set_flush_listener(std::function<void(const RecorderProgress&)> listener);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace pulsewise
