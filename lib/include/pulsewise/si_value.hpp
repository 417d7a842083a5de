// Numbers with SI prefixes and unit symbols, as written in circuit files: "10 uH", "4.7u",
// "100 kHz", "22 mOhm", "2.2 µF", "0.3". A value is a decimal number, optionally followed by one
// SI prefix and then optionally by the unit symbol of the field it is written in. The result is
// always in the coherent SI unit (ohm, henry, farad, volt, ampere, hertz, second, watt).
//
// Accepted prefixes: p (1e-12), n (1e-9), u or µ (1e-6), m (1e-3), k (1e3), M (1e6), G (1e9), as
// defined in BIPM, The International System of Units (SI Brochure), 9th ed., 2019, Table 7. "u"
// is the usual ASCII stand-in for µ; both the micro sign (U+00B5) and the Greek mu (U+03BC) are
// accepted. Prefixes are case-sensitive ("m" is milli, "M" is mega); spellings such as "meg" or
// "K" are rejected with a message that says what to write instead.
#pragma once

#include <string>
#include <string_view>

#include "pulsewise/error.hpp"

namespace pulsewise {

// The unit a field is expressed in. kNone: a dimensionless number (duty cycle, tolerance).
enum class Unit { kNone, kOhm, kHenry, kFarad, kVolt, kAmpere, kHertz, kSecond, kWatt };

// The symbol as written in files: "Ohm", "H", "F", "V", "A", "Hz", "s", "W"; "" for kNone.
const char* unit_symbol(Unit unit);
// The unit's name for messages: "ohm", "henry", ...; "dimensionless" for kNone.
const char* unit_name(Unit unit);

// Outcome of parsing one value. When ok is false, value is 0 and kind/problem/fix explain why.
struct SiParseResult {
  bool ok = false;
  double value = 0.0;                         // in the coherent SI unit when ok
  ErrorKind kind = ErrorKind::kInvalidValue;  // kWrongUnit or kInvalidValue when !ok
  std::string problem;  // what is wrong, e.g. "\"10 uF\" is in F (farad), not in H (henry)"
  std::string fix;      // what to write instead
};

// Parses text such as "10 uH" for a field in `expected` units. Never throws.
SiParseResult try_parse_si_value(std::string_view text, Unit expected);

// Same as try_parse_si_value, but throws InputError (element and where as given) on failure.
double parse_si_value(std::string_view text, Unit expected, const std::string& element = {},
                      const SourceLocation& where = {});

// Formats a value with an engineering prefix for messages: (1e-5, kHenry) -> "10 uH". Up to six
// significant digits; parse_si_value reads the result back.
std::string format_si_value(double value, Unit unit);

}  // namespace pulsewise
