// Circuit files: a circuit, its gate drivers and the options of a run, written in TOML in
// pulsewise's own schema (docs/circuit-file.md). Values carry SI prefixes and units
// ("10 uH", "200 kHz"; see si_value.hpp).
//
//   pulsewise::CircuitFile file = pulsewise::load_circuit_file("data/sensor-node-boost.toml");
//   pulsewise::Simulation sim(file.circuit, file.simulation);
//
// Every problem in the file (TOML syntax, unknown or missing key, wrong unit, value out of range,
// unknown gate or signal name) is thrown as an InputError naming file:line:column, the element,
// what is wrong and what to write instead. Elements and modulators keep their file position in
// their `where` field, so structural errors found later by the core also point into the file.
#pragma once

#include <string>
#include <string_view>

#include "pulsewise/circuit.hpp"
#include "pulsewise/recording.hpp"
#include "pulsewise/simulation.hpp"

namespace pulsewise {

struct CircuitFile {
  std::string path;         // the file as given (or the label passed to parse_circuit_text)
  std::string text;         // its full text, for reports and trace-file provenance
  std::string description;  // [circuit] description, may be empty
  Circuit circuit;
  SimulationOptions simulation;  // from [run]; recorded_signals from [record] signals
  RecordingOptions recording;    // from [record]; windows in seconds
};

// Reads and parses a circuit file. A relative [record] file path is taken relative to the
// directory of the circuit file. Throws InputError (also when the file cannot be read).
CircuitFile load_circuit_file(const std::string& path);

// Parses circuit-file text; path_label is used as the file name in messages and in `path`.
// Paths inside the text are returned as written. Throws InputError.
CircuitFile parse_circuit_text(std::string_view text, std::string path_label);

}  // namespace pulsewise
