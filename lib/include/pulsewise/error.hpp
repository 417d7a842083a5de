// Typed errors for bad user input. Every message names where the problem is (file, line, column
// when the input came from a file), which element, what is wrong and what to change, so that an
// engineer can fix the circuit without reading the source.
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

namespace pulsewise {

// Where a piece of user input came from. An empty file means "built from C++ code".
struct SourceLocation {
  std::string file;
  int line = 0;    // 1-based, 0 when unknown
  int column = 0;  // 1-based, 0 when unknown
};

// What class of input problem was found; the driver maps every kind to the bad-input exit code.
enum class ErrorKind {
  kInvalidValue,    // non-finite, non-positive or out-of-range number
  kDuplicateName,   // two elements, or an element and a node, share a name
  kUnknownNode,     // an element refers to a node name that is not allowed
  kUnknownGate,     // a switch names a gate signal no modulator provides
  kFloatingNode,    // a node (or group of nodes) is connected to nothing else
  kVoltageLoop,     // a loop of voltage sources and zero-ESR capacitors
  kCurrentCutset,   // a cutset of current sources and inductors no device can relieve
  kTooManyDevices,  // more switching devices than a pattern can hold
  kFileSyntax,      // the file is not valid TOML
  kUnknownKey,      // a key the schema does not know
  kMissingKey,      // a required key is absent
  kWrongUnit,       // a value carries a unit symbol that does not fit the field
  kInvalidOption,   // a solver or run option is out of range
  kBadFile,         // a data file is missing, unreadable or not in the expected format
};

const char* to_string(ErrorKind kind);

// Bad user input. what() reads "file:line:column: element 'L1': problem; fix".
class InputError : public std::runtime_error {
 public:
  InputError(ErrorKind kind, std::string element, std::string problem, std::string fix,
             SourceLocation where = {}, std::vector<std::string> elements_involved = {});

  ErrorKind kind() const { return kind_; }
  const std::string& element() const { return element_; }
  const std::string& problem() const { return problem_; }
  const std::string& fix() const { return fix_; }
  const SourceLocation& where() const { return where_; }
  // Every element that takes part (all members of a loop or cutset); includes element().
  const std::vector<std::string>& elements_involved() const { return elements_involved_; }

 private:
  ErrorKind kind_;
  std::string element_;
  std::string problem_;
  std::string fix_;
  SourceLocation where_;
  std::vector<std::string> elements_involved_;
};

}  // namespace pulsewise
