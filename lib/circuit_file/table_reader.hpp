// Reads one TOML table of a circuit file with every problem reported as an InputError that
// names file:line:column, the element and the fix. Keys the schema does not list are rejected
// when the reader is made, so a misspelt required key is reported as a typo, not as missing.
#pragma once

#include <limits>
#include <optional>
#include <string>
#include <string_view>
#include <vector>
#include "toml.hpp"

#include "pulsewise/error.hpp"
#include "pulsewise/si_value.hpp"

namespace pulsewise::detail {

// Allowed interval of a numeric field; the bounds are inclusive unless marked open.
struct Range {
  double min = -std::numeric_limits<double>::infinity();
  double max = std::numeric_limits<double>::infinity();
  bool min_open = false;
  bool max_open = false;

  static Range any() { return {}; }
  static Range positive() { return {0.0, std::numeric_limits<double>::infinity(), true, false}; }
  static Range non_negative() { return {0.0, std::numeric_limits<double>::infinity()}; }
  static Range fraction() { return {0.0, 1.0}; }                   // [0, 1]
  static Range open_fraction() { return {0.0, 1.0, true, true}; }  // (0, 1)
  static Range phase() { return {0.0, 1.0, false, true}; }         // [0, 1)

  bool contains(double x) const;
  std::string describe(Unit unit) const;  // "greater than 0 Ohm", "between 0 and 1", ...
};

SourceLocation location_of(const toml::source_region& region, const std::string& file);
const char* toml_type_name(const toml::node& node);

class TableReader {
 public:
  // section: how the table is named in messages, e.g. "[[inductor]]" or "[run]".
  // element: the name used in messages ("" until known, see set_element).
  TableReader(const toml::table& table, std::string file, std::string section,
              std::vector<std::string> known_keys, std::string element = {});

  // Name used as the element in every later message (once the element's name is known).
  void set_element(std::string name) { element_ = std::move(name); }
  const std::string& element() const { return element_; }
  // The kind reported for a bad value: kInvalidValue for circuit data (the default),
  // kInvalidOption for [run] and [record].
  void set_value_error_kind(ErrorKind kind) { value_error_ = kind; }
  const std::string& section() const { return section_; }
  const std::string& file() const { return file_; }
  const toml::table& table() const { return table_; }

  const toml::node* find(std::string_view key) const { return table_.get(key); }
  SourceLocation location() const { return location_of(table_.source(), file_); }
  SourceLocation location(const toml::node& node) const {
    return location_of(node.source(), file_);
  }

  // A value with SI prefix and unit (see si_value.hpp) inside `range`. `example` is what the
  // fix suggests writing, e.g. "10 uH".
  double value(std::string_view key, Unit unit, Range range, std::string_view example) const;
  double value_or(std::string_view key, Unit unit, Range range, std::string_view example,
                  double fallback) const;
  // The same for a node that is not directly under a key (an array item); `what` names it.
  double value_at(const toml::node& node, std::string_view what, Unit unit, Range range,
                  std::string_view example) const;

  std::string string(std::string_view key, std::string_view example) const;
  std::string string_or(std::string_view key, std::string fallback) const;
  long integer_or(std::string_view key, long min, long max, long fallback) const;
  long integer_at(const toml::node& node, std::string_view what, long min, long max) const;
  bool boolean_or(std::string_view key, bool fallback) const;
  const toml::array& array(std::string_view key, std::string_view example) const;
  const toml::array* array_or_null(std::string_view key, std::string_view example) const;

  [[noreturn]] void fail(ErrorKind kind, const toml::node* at, std::string problem,
                         std::string fix) const;
  [[noreturn]] void fail_at(ErrorKind kind, SourceLocation where, std::string problem,
                            std::string fix) const;

 private:
  const toml::node& require(std::string_view key, std::string_view example) const;
  void reject_unknown_keys() const;
  std::string in_section() const;  // "" or " in [[inductor]]" for messages

  const toml::table& table_;
  std::string file_;
  std::string section_;
  std::vector<std::string> known_keys_;
  std::string element_;
  ErrorKind value_error_ = ErrorKind::kInvalidValue;
};

}  // namespace pulsewise::detail
