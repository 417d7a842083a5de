#include "table_reader.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "suggest.hpp"

namespace pulsewise::detail {

bool Range::contains(double x) const {
  if (min_open ? !(x > min) : !(x >= min)) return false;
  if (max_open ? !(x < max) : !(x <= max)) return false;
  return true;
}

namespace {

std::string number_text(double x, Unit unit) {
  std::ostringstream out;
  out << x;
  if (unit != Unit::kNone) out << ' ' << unit_symbol(unit);
  return out.str();
}

// The value as the user wrote it, for messages: strings quoted, numbers as TOML prints them.
std::string written(const toml::node& node) {
  std::ostringstream out;
  if (const auto* s = node.as_string()) {
    out << '"' << s->get() << '"';
  } else if (node.is_value()) {
    node.visit([&out](const auto& v) { out << v; });
  } else {
    out << "a " << toml_type_name(node);
  }
  return out.str();
}

}  // namespace

std::string Range::describe(Unit unit) const {
  const bool has_min = std::isfinite(min);
  const bool has_max = std::isfinite(max);
  if (has_min && has_max) {
    return std::string("between ") + number_text(min, unit) + (min_open ? " (excluded)" : "") +
           " and " + number_text(max, unit) + (max_open ? " (excluded)" : "");
  }
  if (has_min) {
    return (min_open ? "greater than " : "at least ") + number_text(min, unit);
  }
  if (has_max) return (max_open ? "less than " : "at most ") + number_text(max, unit);
  return "finite";
}

SourceLocation location_of(const toml::source_region& region, const std::string& file) {
  SourceLocation where;
  where.file = file;
  where.line = static_cast<int>(region.begin.line);
  where.column = static_cast<int>(region.begin.column);
  return where;
}

const char* toml_type_name(const toml::node& node) {
  switch (node.type()) {
    case toml::node_type::table: return "table";
    case toml::node_type::array: return "array";
    case toml::node_type::string: return "string";
    case toml::node_type::integer: return "integer";
    case toml::node_type::floating_point: return "floating-point number";
    case toml::node_type::boolean: return "boolean";
    case toml::node_type::date: return "date";
    case toml::node_type::time: return "time";
    case toml::node_type::date_time: return "date-time";
    case toml::node_type::none: return "nothing";
  }
  return "value";
}

TableReader::TableReader(const toml::table& table, std::string file, std::string section,
                         std::vector<std::string> known_keys, std::string element)
    : table_(table),
      file_(std::move(file)),
      section_(std::move(section)),
      known_keys_(std::move(known_keys)),
      element_(std::move(element)) {
  reject_unknown_keys();
}

void TableReader::reject_unknown_keys() const {
  for (auto&& [key, node] : table_) {
    const std::string name(key.str());
    if (std::find(known_keys_.begin(), known_keys_.end(), name) != known_keys_.end()) continue;
    std::string fix = did_you_mean(name, known_keys_);
    if (fix.empty()) {
      fix = "known keys here are:";
      for (const auto& k : known_keys_) fix += " " + k;
    }
    fail_at(ErrorKind::kUnknownKey, location_of(key.source(), file_),
            "unknown key '" + name + "'" + (element_.empty() ? "" : " in " + section_),
            std::move(fix));
  }
}

std::string TableReader::in_section() const { return element_.empty() ? section_ + ": " : ""; }

void TableReader::fail(ErrorKind kind, const toml::node* at, std::string problem,
                       std::string fix) const {
  fail_at(kind, at ? location(*at) : location(), std::move(problem), std::move(fix));
}

void TableReader::fail_at(ErrorKind kind, SourceLocation where, std::string problem,
                          std::string fix) const {
  if (kind == ErrorKind::kInvalidValue) kind = value_error_;
  throw InputError(kind, element_, in_section() + problem, std::move(fix), std::move(where));
}

const toml::node& TableReader::require(std::string_view key, std::string_view example) const {
  const toml::node* node = find(key);
  if (!node) {
    fail(ErrorKind::kMissingKey, nullptr,
         "required key '" + std::string(key) + "' is missing" +
             (element_.empty() ? "" : " from " + section_),
         "add " + std::string(key) + " = " + std::string(example));
  }
  return *node;
}

double TableReader::value_at(const toml::node& node, std::string_view what, Unit unit, Range range,
                             std::string_view example) const {
  const std::string name(what);
  double x = 0.0;
  if (const auto* i = node.as_integer()) {
    x = static_cast<double>(i->get());
  } else if (const auto* f = node.as_floating_point()) {
    x = f->get();
    if (!std::isfinite(x)) {
      fail(ErrorKind::kInvalidValue, &node, name + " = " + written(node) + " is not finite",
           "write a finite value, e.g. " + name + " = " + std::string(example));
    }
  } else if (const auto* s = node.as_string()) {
    SiParseResult r = try_parse_si_value(s->get(), unit);
    if (!r.ok) fail(r.kind, &node, name + ": " + r.problem, std::move(r.fix));
    x = r.value;
  } else {
    fail(ErrorKind::kInvalidValue, &node,
         name + " must be a number or a string such as " + std::string(example) + ", not a " +
             toml_type_name(node),
         "write e.g. " + name + " = " + std::string(example));
  }
  if (!range.contains(x)) {
    fail(ErrorKind::kInvalidValue, &node,
         name + " = " + written(node) + " is out of range: it must be " + range.describe(unit),
         "write e.g. " + name + " = " + std::string(example));
  }
  return x;
}

double TableReader::value(std::string_view key, Unit unit, Range range,
                          std::string_view example) const {
  return value_at(require(key, example), key, unit, range, example);
}

double TableReader::value_or(std::string_view key, Unit unit, Range range, std::string_view example,
                             double fallback) const {
  const toml::node* node = find(key);
  return node ? value_at(*node, key, unit, range, example) : fallback;
}

std::string TableReader::string(std::string_view key, std::string_view example) const {
  const toml::node& node = require(key, example);
  const auto* s = node.as_string();
  if (!s) {
    fail(ErrorKind::kInvalidValue, &node,
         std::string(key) + " must be a string, not a " + toml_type_name(node),
         "write e.g. " + std::string(key) + " = " + std::string(example));
  }
  return s->get();
}

std::string TableReader::string_or(std::string_view key, std::string fallback) const {
  if (!find(key)) return fallback;
  return string(key, "\"...\"");
}

long TableReader::integer_at(const toml::node& node, std::string_view what, long min,
                             long max) const {
  const std::string name(what);
  const std::string example = std::to_string(std::max(min, std::min(max, 100L)));
  long n = 0;
  if (const auto* i = node.as_integer()) {
    n = static_cast<long>(i->get());
  } else if (const auto* f = node.as_floating_point(); f && std::isfinite(f->get()) &&
                                                       std::floor(f->get()) == f->get() &&
                                                       std::fabs(f->get()) < 9e15) {
    n = static_cast<long>(f->get());
  } else {
    fail(ErrorKind::kInvalidValue, &node, name + " must be a whole number, not " + written(node),
         "write e.g. " + name + " = " + example + " (no quotes, no unit)");
  }
  if (n < min || n > max) {
    std::string bound = "at least " + std::to_string(min);
    if (max < std::numeric_limits<long>::max()) bound += " and at most " + std::to_string(max);
    fail(ErrorKind::kInvalidValue, &node,
         name + " = " + written(node) + " is out of range: it must be " + bound,
         "write e.g. " + name + " = " + example);
  }
  return n;
}

long TableReader::integer_or(std::string_view key, long min, long max, long fallback) const {
  const toml::node* node = find(key);
  return node ? integer_at(*node, key, min, max) : fallback;
}

bool TableReader::boolean_or(std::string_view key, bool fallback) const {
  const toml::node* node = find(key);
  if (!node) return fallback;
  const auto* b = node->as_boolean();
  if (!b) {
    fail(ErrorKind::kInvalidValue, node,
         std::string(key) + " must be true or false, not " + written(*node),
         "write " + std::string(key) + " = true or " + std::string(key) + " = false (no quotes)");
  }
  return b->get();
}

const toml::array* TableReader::array_or_null(std::string_view key,
                                              std::string_view example) const {
  const toml::node* node = find(key);
  if (!node) return nullptr;
  const auto* a = node->as_array();
  if (!a) {
    fail(ErrorKind::kInvalidValue, node,
         std::string(key) + " must be an array, not " + written(*node),
         "write e.g. " + std::string(key) + " = " + std::string(example));
  }
  return a;
}

const toml::array& TableReader::array(std::string_view key, std::string_view example) const {
  require(key, example);
  return *array_or_null(key, example);
}

}  // namespace pulsewise::detail
