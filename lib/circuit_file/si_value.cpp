#include "pulsewise/si_value.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <optional>
#include <system_error>

namespace pulsewise {

const char* unit_symbol(Unit unit) {
  switch (unit) {
    case Unit::kNone: return "";
    case Unit::kOhm: return "Ohm";
    case Unit::kHenry: return "H";
    case Unit::kFarad: return "F";
    case Unit::kVolt: return "V";
    case Unit::kAmpere: return "A";
    case Unit::kHertz: return "Hz";
    case Unit::kSecond: return "s";
    case Unit::kWatt: return "W";
  }
  return "";
}

const char* unit_name(Unit unit) {
  switch (unit) {
    case Unit::kNone: return "dimensionless";
    case Unit::kOhm: return "ohm";
    case Unit::kHenry: return "henry";
    case Unit::kFarad: return "farad";
    case Unit::kVolt: return "volt";
    case Unit::kAmpere: return "ampere";
    case Unit::kHertz: return "hertz";
    case Unit::kSecond: return "second";
    case Unit::kWatt: return "watt";
  }
  return "";
}

namespace {

struct Prefix {
  std::string_view text;
  int exponent;
};

// BIPM, The International System of Units (SI Brochure), 9th ed., 2019, Table 7, restricted to
// the prefixes that occur in power-electronics component values; "u" stands in for µ.
constexpr std::array<Prefix, 9> kPrefixes{{
    {"p", -12},
    {"n", -9},
    {"u", -6},
    {"\xC2\xB5", -6},  // U+00B5 MICRO SIGN
    {"\xCE\xBC", -6},  // U+03BC GREEK SMALL LETTER MU
    {"m", -3},
    {"k", 3},
    {"M", 6},
    {"G", 9},
}};

struct UnitSpelling {
  std::string_view text;
  Unit unit;
};

constexpr std::array<UnitSpelling, 11> kUnitSpellings{{
    {"Ohm", Unit::kOhm},
    {"ohm", Unit::kOhm},
    {"\xCE\xA9", Unit::kOhm},      // U+03A9 GREEK CAPITAL LETTER OMEGA
    {"\xE2\x84\xA6", Unit::kOhm},  // U+2126 OHM SIGN
    {"H", Unit::kHenry},
    {"F", Unit::kFarad},
    {"V", Unit::kVolt},
    {"A", Unit::kAmpere},
    {"Hz", Unit::kHertz},
    {"s", Unit::kSecond},
    {"W", Unit::kWatt},
}};

std::string_view trim(std::string_view s) {
  const auto is_space = [](char c) { return c == ' ' || c == '\t'; };
  while (!s.empty() && is_space(s.front())) s.remove_prefix(1);
  while (!s.empty() && is_space(s.back())) s.remove_suffix(1);
  return s;
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) {
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  }
  return out;
}

std::optional<Unit> unit_from_symbol(std::string_view s) {
  for (const auto& spelling : kUnitSpellings) {
    if (spelling.text == s) return spelling.unit;
  }
  return std::nullopt;
}

// A decimal number at the start of s: [+-] digits [. digits] [(e|E) [+-] digits].
struct NumberText {
  std::string_view significand;  // sign, digits and decimal point
  std::string_view exponent;     // digits of the exponent with its sign, may be empty
  std::size_t length = 0;        // characters consumed, 0 when s does not start with a number
};

std::size_t count_digits(std::string_view s, std::size_t at) {
  std::size_t n = 0;
  while (at + n < s.size() && s[at + n] >= '0' && s[at + n] <= '9') ++n;
  return n;
}

NumberText scan_number(std::string_view s) {
  NumberText out;
  std::size_t at = 0;
  if (at < s.size() && (s[at] == '+' || s[at] == '-')) ++at;
  std::size_t digits = count_digits(s, at);
  at += digits;
  if (at < s.size() && s[at] == '.') {
    const std::size_t fraction = count_digits(s, at + 1);
    digits += fraction;
    at += 1 + fraction;
  }
  if (digits == 0) return out;
  out.significand = s.substr(0, at);
  if (at < s.size() && (s[at] == 'e' || s[at] == 'E')) {
    std::size_t e = at + 1;
    if (e < s.size() && (s[e] == '+' || s[e] == '-')) ++e;
    const std::size_t exponent_digits = count_digits(s, e);
    if (exponent_digits > 0) {
      out.exponent = s.substr(at + 1, e + exponent_digits - at - 1);
      at = e + exponent_digits;
    }
  }
  out.length = at;
  return out;
}

SiParseResult failure(ErrorKind kind, std::string problem, std::string fix) {
  SiParseResult r;
  r.kind = kind;
  r.problem = std::move(problem);
  r.fix = std::move(fix);
  return r;
}

std::string quoted(std::string_view text) { return "\"" + std::string(text) + "\""; }

// "write e.g. \"10 uH\"": an example in the expected unit for fix texts.
std::string example_for(Unit unit) {
  switch (unit) {
    case Unit::kNone: return "\"0.3\" or 0.3";
    case Unit::kOhm: return "\"22 mOhm\"";
    case Unit::kHenry: return "\"10 uH\"";
    case Unit::kFarad: return "\"47 uF\"";
    case Unit::kVolt: return "\"12 V\"";
    case Unit::kAmpere: return "\"1.5 A\"";
    case Unit::kHertz: return "\"200 kHz\"";
    case Unit::kSecond: return "\"50 ns\"";
    case Unit::kWatt: return "\"2 W\"";
  }
  return "";
}

std::string expected_phrase(Unit unit) {
  if (unit == Unit::kNone) return "a dimensionless number";
  return std::string("a value in ") + unit_symbol(unit) + " (" + unit_name(unit) + ")";
}

// "uh" for "uH", "khz" for "kHz": the unit symbol, after an optional prefix, in the wrong case.
bool wrong_case_of(std::string_view suffix, std::string_view unit) {
  if (lower(suffix) == lower(unit) && suffix != unit) return true;
  for (const auto& prefix : kPrefixes) {
    if (suffix.substr(0, prefix.text.size()) != prefix.text) continue;
    const std::string_view rest = suffix.substr(prefix.text.size());
    if (lower(rest) == lower(unit) && rest != unit) return true;
  }
  return false;
}

// A suffix we refuse with a specific message, or nullopt when the suffix is simply unknown.
std::optional<SiParseResult> refuse_known_misspelling(std::string_view text,
                                                      std::string_view suffix, Unit expected) {
  const std::string low = lower(suffix);
  const std::string unit = unit_symbol(expected);
  if (low.rfind("meg", 0) == 0) {
    return failure(ErrorKind::kInvalidValue,
                   quoted(text) + " uses \"" + std::string(suffix.substr(0, 3)) +
                       "\", which is not an SI prefix",
                   "write M for mega (1e6), e.g. \"1 M" + unit + "\"; m is milli (1e-3)");
  }
  if (suffix.front() == 'K') {
    return failure(ErrorKind::kInvalidValue,
                   quoted(text) + " uses \"K\"; the SI prefix for kilo is lowercase",
                   "write k, e.g. \"100 k" + unit + "\"");
  }
  if (expected != Unit::kNone && wrong_case_of(suffix, unit)) {
    return failure(
        ErrorKind::kWrongUnit, quoted(text) + ": unit symbols are case-sensitive",
        "write " + unit + " for " + unit_name(expected) + ", e.g. " + example_for(expected));
  }
  return std::nullopt;
}

struct Suffix {
  int exponent = 0;
  std::optional<Unit> unit;  // nullopt when no unit symbol was written
};

// Splits "kHz" into a prefix and a unit. Units are tried whole first; none of our unit symbols
// starts with a prefix letter, so the split is never ambiguous.
std::optional<Suffix> decode_suffix(std::string_view suffix) {
  if (suffix.empty()) return Suffix{};
  if (auto unit = unit_from_symbol(suffix)) return Suffix{0, unit};
  for (const auto& prefix : kPrefixes) {
    if (suffix.substr(0, prefix.text.size()) != prefix.text) continue;
    const std::string_view rest = suffix.substr(prefix.text.size());
    if (rest.empty()) return Suffix{prefix.exponent, std::nullopt};
    if (auto unit = unit_from_symbol(rest)) return Suffix{prefix.exponent, unit};
  }
  return std::nullopt;
}

SiParseResult wrong_unit(std::string_view text, Unit written, Unit expected) {
  if (expected == Unit::kNone) {
    return failure(ErrorKind::kWrongUnit,
                   quoted(text) + " carries the unit " + unit_symbol(written) +
                       ", but this value is dimensionless",
                   "write the plain number, e.g. 0.3");
  }
  return failure(ErrorKind::kWrongUnit,
                 quoted(text) + " is in " + unit_symbol(written) + " (" + unit_name(written) +
                     "), but this value is in " + unit_symbol(expected) + " (" +
                     unit_name(expected) + ")",
                 std::string("write the value in ") + unit_symbol(expected) + ", e.g. " +
                     example_for(expected));
}

SiParseResult not_a_value(std::string_view text, Unit expected, std::string_view detail) {
  std::string fix = "write " + expected_phrase(expected) + ", e.g. " + example_for(expected);
  if (expected != Unit::kNone) fix += "; accepted prefixes: p n u µ m k M G";
  return failure(ErrorKind::kInvalidValue,
                 "cannot read " + quoted(text) + " as " + expected_phrase(expected) + ": " +
                     std::string(detail),
                 std::move(fix));
}

// Parses significand * 10^(exponent + prefix) in one correctly rounded conversion, so that
// "4.7u" gives exactly the double nearest 4.7e-6.
std::optional<double> to_double(const NumberText& number, int prefix_exponent) {
  long exponent = 0;
  if (!number.exponent.empty()) {
    std::string_view e = number.exponent;
    if (e.front() == '+') e.remove_prefix(1);
    const auto [ptr, ec] = std::from_chars(e.data(), e.data() + e.size(), exponent);
    if (ec != std::errc() || ptr != e.data() + e.size()) return std::nullopt;
    if (exponent > 100000 || exponent < -100000) return std::nullopt;
  }
  std::string_view significand = number.significand;
  if (significand.front() == '+') significand.remove_prefix(1);
  std::string text(significand);
  text += 'e';
  text += std::to_string(exponent + prefix_exponent);
  double value = 0.0;
  const auto [ptr, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (ec != std::errc() || ptr != text.data() + text.size() || !std::isfinite(value)) {
    return std::nullopt;
  }
  return value;
}

SiParseResult success(double value) {
  SiParseResult r;
  r.ok = true;
  r.value = value;
  return r;
}

}  // namespace

SiParseResult try_parse_si_value(std::string_view text, Unit expected) {
  const std::string_view s = trim(text);
  if (s.empty()) return not_a_value(text, expected, "it is empty");
  const std::string low = lower(s);
  if (low.find("inf") != std::string::npos || low.find("nan") != std::string::npos) {
    return not_a_value(text, expected, "infinite and not-a-number values are not allowed");
  }
  const NumberText number = scan_number(s);
  if (number.length == 0) return not_a_value(text, expected, "it does not start with a number");
  const std::string_view suffix = trim(s.substr(number.length));
  if (!suffix.empty() && suffix.front() == ',') {
    return not_a_value(text, expected, "the decimal separator is a point, not a comma");
  }
  const std::optional<Suffix> decoded = decode_suffix(suffix);
  if (!decoded) {
    if (auto refusal = refuse_known_misspelling(text, suffix, expected)) return *refusal;
    return not_a_value(text, expected,
                       "\"" + std::string(suffix) + "\" is not an SI prefix and unit symbol");
  }
  if (decoded->unit && *decoded->unit != expected) {
    return wrong_unit(text, *decoded->unit, expected);
  }
  const std::optional<double> value = to_double(number, decoded->exponent);
  if (!value) return not_a_value(text, expected, "it is too large or too small");
  return success(*value);
}

double parse_si_value(std::string_view text, Unit expected, const std::string& element,
                      const SourceLocation& where) {
  SiParseResult r = try_parse_si_value(text, expected);
  if (!r.ok) throw InputError(r.kind, element, std::move(r.problem), std::move(r.fix), where);
  return r.value;
}

std::string format_si_value(double value, Unit unit) {
  const std::string symbol = unit_symbol(unit);
  char buffer[64];
  if (unit == Unit::kNone || value == 0.0 || !std::isfinite(value)) {
    std::snprintf(buffer, sizeof buffer, "%.6g", value);
    return symbol.empty() ? std::string(buffer) : std::string(buffer) + " " + symbol;
  }
  int exponent = static_cast<int>(std::floor(std::log10(std::fabs(value)) / 3.0)) * 3;
  exponent = std::clamp(exponent, -12, 9);
  std::string_view prefix;
  for (const auto& p : kPrefixes) {
    if (p.exponent == exponent && p.text.size() == 1) prefix = p.text;
  }
  std::snprintf(buffer, sizeof buffer, "%.6g", value / std::pow(10.0, exponent));
  return std::string(buffer) + " " + std::string(prefix) + symbol;
}

}  // namespace pulsewise
