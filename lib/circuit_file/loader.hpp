// Internals of the circuit-file loader: one reader per kind of table. Each reader validates every
// value it can on its own (units, ranges, names); cross-references (gate names, signal names,
// duplicate names) are checked once the whole file has been read.
#pragma once

#include <set>
#include <string>
#include <vector>
#include "toml.hpp"

#include "pulsewise/circuit.hpp"
#include "pulsewise/recording.hpp"
#include "pulsewise/simulation.hpp"
#include "table_reader.hpp"

namespace pulsewise::detail {

// A name defined in the file and where.
struct NamedPlace {
  std::string name;
  SourceLocation where;
};

// Element sections ("resistor", "inductor", ...) in the order the documentation lists them.
const std::vector<std::string>& element_section_keys();

// Checks a node, element or modulator name: not empty, no white space, no '.' (which separates
// the name from the quantity in signal names such as "L1.i").
void check_name(const TableReader& reader, const toml::node& node, const std::string& name,
                std::string_view what);

// The "name" of a table before the reader checks its keys, so that even an unknown-key message
// can name the element. "" when absent or not a string.
std::string peek_name(const toml::table& table);

// Appends the element in `table` (a [[<section>]] entry) to the circuit.
void read_element(const std::string& section, const toml::table& table, const std::string& file,
                  Circuit& circuit);

// Modulators; each returns the gate signal names it provides.
std::vector<NamedPlace> read_pwm(const toml::table& table, const std::string& file,
                                 Circuit& circuit);
std::vector<NamedPlace> read_complementary_pwm(const toml::table& table, const std::string& file,
                                               Circuit& circuit);
std::vector<NamedPlace> read_schedule(const toml::table& table, const std::string& file,
                                      Circuit& circuit);

// Every node name the elements use (ground included).
std::set<std::string> node_names(const Circuit& circuit);

// A signal is "<node>.v", "<element>.v" or "<element>.i" of this circuit; `at` is where it was
// written, `key` how the message names the list ("[record] signals").
void check_signal(const Circuit& circuit, const std::string& signal, const TableReader& reader,
                  const toml::node& at, std::string_view key);

// [run]; `run` may be null (all defaults). Signal names are checked against the circuit.
SimulationOptions read_run(const toml::table* run, const std::string& file, const Circuit& circuit);

// [record]; `record` may be null. Fills options.recorded_signals from `signals`. Windows given
// in periods are turned into seconds with switching_period_s and the run length.
RecordingOptions read_record(const toml::table* record, const std::string& file,
                             const Circuit& circuit, double switching_period_s,
                             SimulationOptions& options);

}  // namespace pulsewise::detail
