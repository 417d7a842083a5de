// The names of the trace file layout, shared by the recorder and the reader so that the two can
// not drift apart. docs/trace-file.md describes each of them; change both together.
#pragma once

#include <H5Cpp.h>

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "pulsewise/observer.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise::detail::layout {

// Groups.
inline constexpr const char* kSettings = "/settings";
inline constexpr const char* kSignals = "/signals";
inline constexpr const char* kWaveforms = "/waveforms";
inline constexpr const char* kCycles = "/cycles";
inline constexpr const char* kEvents = "/events";
inline constexpr const char* kSummary = "/summary";
inline constexpr const char* kLastCycle = "/summary/last_cycle";
inline constexpr const char* kStartup = "/summary/startup";

// Root attributes that change while the run goes on.
inline constexpr const char* kComplete = "complete";
inline constexpr const char* kFlushedCycles = "flushed_cycles";
inline constexpr const char* kFlushedUntil = "flushed_until_s";

// D1, D2, D3: the first three configuration intervals of a period are kept.
inline constexpr int kIntervalColumns = 3;

// Stable names written into the file's enumeration types. They are part of the format, so they
// do not follow the wording of the library's to_string() functions.
const char* mode_name(ConductionMode mode);
const char* event_kind_name(EventKind kind);
const char* run_end_name(RunEnd end);
const char* quantity_name(SignalQuantity quantity);
std::optional<RunEnd> run_end_from_name(const std::string& name);

// HDF5 enumeration types (8-bit) holding the names above.
H5::EnumType mode_type();
H5::EnumType event_kind_type();
H5::EnumType quantity_type();

}  // namespace pulsewise::detail::layout
