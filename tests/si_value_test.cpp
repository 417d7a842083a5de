// SI value parsing. Prefix factors: BIPM, The International System of Units (SI Brochure),
// 9th ed., 2019, Table 7 ("SI prefixes"). Expected values are C++ literals, converted by the
// compiler, so an exact comparison checks that parsing is correctly rounded.
#include "pulsewise/si_value.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

namespace pulsewise {
namespace {

double parsed(std::string_view text, Unit unit) {
  const SiParseResult r = try_parse_si_value(text, unit);
  EXPECT_TRUE(r.ok) << text << ": " << r.problem;
  return r.value;
}

SiParseResult failed(std::string_view text, Unit unit) {
  const SiParseResult r = try_parse_si_value(text, unit);
  EXPECT_FALSE(r.ok) << text << " was accepted as " << r.value;
  EXPECT_FALSE(r.problem.empty());
  EXPECT_FALSE(r.fix.empty());
  return r;
}

// BIPM SI Brochure, 9th ed., 2019, Table 7: pico 1e-12 ... giga 1e9.
TEST(SiValue, ReadsEveryAcceptedPrefixWithItsBipmFactor) {
  EXPECT_EQ(parsed("3 pF", Unit::kFarad), 3e-12);
  EXPECT_EQ(parsed("3 nF", Unit::kFarad), 3e-9);
  EXPECT_EQ(parsed("3 uF", Unit::kFarad), 3e-6);
  EXPECT_EQ(parsed("3 \xC2\xB5"
                   "F",
                   Unit::kFarad),
            3e-6);  // micro sign U+00B5
  EXPECT_EQ(parsed("3 \xCE\xBC"
                   "F",
                   Unit::kFarad),
            3e-6);  // Greek mu U+03BC
  EXPECT_EQ(parsed("3 mF", Unit::kFarad), 3e-3);
  EXPECT_EQ(parsed("3 kHz", Unit::kHertz), 3e3);
  EXPECT_EQ(parsed("3 MHz", Unit::kHertz), 3e6);
  EXPECT_EQ(parsed("3 GHz", Unit::kHertz), 3e9);
}

// Common practice, no source: the examples a circuit file is expected to carry.
TEST(SiValue, ReadsTheSpellingsOfTheCircuitFileFormat) {
  EXPECT_EQ(parsed("10 uH", Unit::kHenry), 10e-6);
  EXPECT_EQ(parsed("4.7u", Unit::kFarad), 4.7e-6);
  EXPECT_EQ(parsed("100 kHz", Unit::kHertz), 100e3);
  EXPECT_EQ(parsed("22 mOhm", Unit::kOhm), 22e-3);
  EXPECT_EQ(parsed("22 mohm", Unit::kOhm), 22e-3);
  EXPECT_EQ(parsed("22 m\xCE\xA9", Unit::kOhm), 22e-3);      // Greek capital omega
  EXPECT_EQ(parsed("22 m\xE2\x84\xA6", Unit::kOhm), 22e-3);  // ohm sign U+2126
  EXPECT_EQ(parsed("1.5", Unit::kNone), 1.5);
  EXPECT_EQ(parsed("2.2 \xC2\xB5"
                   "F",
                   Unit::kFarad),
            2.2e-6);
  EXPECT_EQ(parsed("0.3", Unit::kNone), 0.3);
  EXPECT_EQ(parsed("12 V", Unit::kVolt), 12.0);
  EXPECT_EQ(parsed("-5 V", Unit::kVolt), -5.0);
  EXPECT_EQ(parsed("+2 A", Unit::kAmpere), 2.0);
  EXPECT_EQ(parsed("50 ns", Unit::kSecond), 50e-9);
  EXPECT_EQ(parsed("2.5 kW", Unit::kWatt), 2.5e3);
  EXPECT_EQ(parsed("250 mW", Unit::kWatt), 250e-3);
  EXPECT_EQ(parsed("1e-3 s", Unit::kSecond), 1e-3);
  EXPECT_EQ(parsed("2.5e3 kHz", Unit::kHertz), 2.5e6);
  EXPECT_EQ(parsed("  7mH  ", Unit::kHenry), 7e-3);
  EXPECT_EQ(parsed(".5 m", Unit::kSecond), 0.5e-3);
}

TEST(SiValue, ReadsAPrefixWithoutUnitAsThatPrefixOfTheFieldUnit) {
  EXPECT_EQ(parsed("10 u", Unit::kHenry), 10e-6);
  EXPECT_EQ(parsed("1 M", Unit::kOhm), 1e6);
  EXPECT_EQ(parsed("1 m", Unit::kOhm), 1e-3);  // m is milli, never mega
  EXPECT_EQ(parsed("5 m", Unit::kNone), 5e-3);
}

TEST(SiValue, RejectsAUnitThatDoesNotFitTheField) {
  const SiParseResult r = failed("10 uF", Unit::kHenry);
  EXPECT_EQ(r.kind, ErrorKind::kWrongUnit);
  EXPECT_NE(r.problem.find("H (henry)"), std::string::npos) << r.problem;
  EXPECT_NE(r.fix.find("H"), std::string::npos) << r.fix;
  EXPECT_EQ(failed("100 kHz", Unit::kSecond).kind, ErrorKind::kWrongUnit);
  EXPECT_EQ(failed("12 V", Unit::kAmpere).kind, ErrorKind::kWrongUnit);
}

TEST(SiValue, RejectsAUnitOnADimensionlessField) {
  const SiParseResult r = failed("0.3 V", Unit::kNone);
  EXPECT_EQ(r.kind, ErrorKind::kWrongUnit);
  EXPECT_NE(r.problem.find("dimensionless"), std::string::npos) << r.problem;
}

TEST(SiValue, RejectsMegSpellingsAndSaysToWriteCapitalM) {
  for (const char* text : {"1 meg", "1 Meg", "1 MEG", "2.2megOhm"}) {
    const SiParseResult r = failed(text, Unit::kOhm);
    EXPECT_EQ(r.kind, ErrorKind::kInvalidValue);
    EXPECT_NE(r.fix.find("write M for mega"), std::string::npos) << r.fix;
  }
}

TEST(SiValue, RejectsCapitalKAndSaysKiloIsLowercase) {
  const SiParseResult r = failed("100 KHz", Unit::kHertz);
  EXPECT_NE(r.fix.find("write k"), std::string::npos) << r.fix;
}

TEST(SiValue, RejectsPrefixesOutsideTheAcceptedSet) {
  // Femto and tera are SI prefixes (BIPM Table 7) but not accepted by this format.
  failed("3 fF", Unit::kFarad);
  failed("3 THz", Unit::kHertz);
  failed("3 cF", Unit::kFarad);
}

TEST(SiValue, RejectsWrongCaseOfAUnitSymbol) {
  const SiParseResult r = failed("10 uh", Unit::kHenry);
  EXPECT_NE(r.problem.find("case-sensitive"), std::string::npos) << r.problem;
  failed("100 khz", Unit::kHertz);
}

TEST(SiValue, RejectsGarbageAndTrailingJunk) {
  for (const char* text : {"", "   ", "abc", "uH", "10 uHx", "10 u H", "1.2.3", "4,7u", "1e", "1e+",
                           "--1", "10 uH extra", "0x10", "1 2"}) {
    EXPECT_EQ(failed(text, Unit::kHenry).kind, ErrorKind::kInvalidValue) << text;
  }
}

TEST(SiValue, RejectsNonFiniteValues) {
  for (const char* text : {"inf", "-inf", "nan", "infinity", "1e400", "1e999 uH"}) {
    failed(text, Unit::kHenry);
  }
}

TEST(SiValue, ThrowingParserCarriesElementAndLocation) {
  const SourceLocation where{"c.toml", 7, 14};
  try {
    parse_si_value("10 uF", Unit::kHenry, "L1", where);
    FAIL() << "no exception";
  } catch (const InputError& e) {
    EXPECT_EQ(e.kind(), ErrorKind::kWrongUnit);
    EXPECT_EQ(e.element(), "L1");
    EXPECT_EQ(e.where().line, 7);
    EXPECT_NE(std::string(e.what()).find("c.toml:7:14: element 'L1': "), std::string::npos)
        << e.what();
  }
}

// Common practice, no source: engineering notation uses exponents in steps of three.
TEST(SiValue, FormatsWithEngineeringPrefixesThatReadBack) {
  EXPECT_EQ(format_si_value(1e-5, Unit::kHenry), "10 uH");
  EXPECT_EQ(format_si_value(2.2e-6, Unit::kFarad), "2.2 uF");
  EXPECT_EQ(format_si_value(200e3, Unit::kHertz), "200 kHz");
  EXPECT_EQ(format_si_value(0.022, Unit::kOhm), "22 mOhm");
  EXPECT_EQ(format_si_value(12.0, Unit::kVolt), "12 V");
  EXPECT_EQ(format_si_value(0.3, Unit::kNone), "0.3");
  for (double x : {4.7e-6, 33e-9, 1.5e6, 0.25, 6.8e-12}) {
    EXPECT_EQ(parsed(format_si_value(x, Unit::kFarad), Unit::kFarad), x);
  }
}

TEST(SiValue, NamesEveryUnit) {
  EXPECT_STREQ(unit_symbol(Unit::kOhm), "Ohm");
  EXPECT_STREQ(unit_symbol(Unit::kHertz), "Hz");
  EXPECT_STREQ(unit_name(Unit::kSecond), "second");
  EXPECT_STREQ(unit_symbol(Unit::kNone), "");
}

}  // namespace
}  // namespace pulsewise
