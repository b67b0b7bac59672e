// Engineering numbers as design files write them: SI prefixes, RKM codes, percent and
// ppm, and the errors for text that is none of these.
#include <catch2/catch.hpp>

#include <string>

#include "lotwise/error.hpp"
#include "lotwise/units.hpp"
#include "test_support.hpp"

using lotwise::DesignError;
using lotwise::format_si;
using lotwise::parse_quantity;
using lotwise::parse_value;
using lotwise::testing::close_rel;

TEST_CASE("units: SI prefixes scale the number", "[units]") {
  // source: SI Brochure (BIPM, 9th ed.), table 7 of SI prefixes
  CHECK_THAT(parse_value("4.99k"), close_rel(4990.0, 1e-15));
  CHECK_THAT(parse_value("100n"), close_rel(100e-9, 1e-15));
  CHECK_THAT(parse_value("2.2u"), close_rel(2.2e-6, 1e-15));
  CHECK_THAT(parse_value("1f"), close_rel(1e-15, 1e-15));
  CHECK_THAT(parse_value("47p"), close_rel(47e-12, 1e-15));
  CHECK_THAT(parse_value("3.3m"), close_rel(3.3e-3, 1e-15));
  CHECK_THAT(parse_value("1M"), close_rel(1e6, 1e-15));
  CHECK_THAT(parse_value("2G"), close_rel(2e9, 1e-15));
  CHECK_THAT(parse_value("1T"), close_rel(1e12, 1e-15));
  // 'm' is milli and 'M' mega: the case carries the meaning.
  CHECK(parse_value("1m") < 1.0);
  CHECK(parse_value("1M") > 1.0);
}

TEST_CASE("units: both micro signs are read as 1e-6", "[units]") {
  // U+00B5 MICRO SIGN and U+03BC GREEK SMALL LETTER MU, as keyboards produce either.
  CHECK_THAT(parse_value("2.2\xC2\xB5"), close_rel(2.2e-6, 1e-15));
  CHECK_THAT(parse_value("2.2\xCE\xBC"), close_rel(2.2e-6, 1e-15));
  CHECK_THAT(parse_value("10\xC2\xB5" "F"), close_rel(10e-6, 1e-15));
}

TEST_CASE("units: RKM codes put the multiplier letter at the decimal point", "[units]") {
  // source: IEC 60062:2016, letter and digit code for resistance and capacitance values
  CHECK_THAT(parse_value("4k7"), close_rel(4700.0, 1e-15));
  CHECK_THAT(parse_value("2R2"), close_rel(2.2, 1e-15));
  // A leading letter is a leading decimal point (from memory: IEC 60062 writes R47).
  CHECK_THAT(parse_value("R47"), close_rel(0.47, 1e-15));
  CHECK_THAT(parse_value("k56"), close_rel(560.0, 1e-15));
  CHECK_THAT(parse_value("1M5"), close_rel(1.5e6, 1e-15));
  CHECK_THAT(parse_value("4n7"), close_rel(4.7e-9, 1e-15));
  CHECK_THAT(parse_value("4k99"), close_rel(4990.0, 1e-15));
  // The same value written two ways is the same number.
  CHECK(parse_value("4k7") == parse_value("4.7k"));
}

TEST_CASE("units: a trailing unit word is accepted and ignored", "[units]") {
  CHECK_THAT(parse_value("10kohm"), close_rel(1e4, 1e-15));
  // source: SI Brochure (BIPM, 9th ed.), 5.4.3: a space may part number and unit, but
  // the prefix is joined to the unit symbol.
  CHECK_THAT(parse_value("10 kohm"), close_rel(1e4, 1e-15));
  CHECK_THAT(parse_value("100 nF"), close_rel(100e-9, 1e-15));
  CHECK_THAT(parse_value("100nF"), close_rel(100e-9, 1e-15));
  CHECK_THAT(parse_value("1kHz"), close_rel(1e3, 1e-15));
  CHECK_THAT(parse_value("5V"), close_rel(5.0, 1e-15));
  CHECK_THAT(parse_value("47R"), close_rel(47.0, 1e-15));
  // A lone 'F' is the farad (femto is lower-case 'f'), so "1F" is one farad.
  CHECK_THAT(parse_value("1F"), close_rel(1.0, 1e-15));
  CHECK_THAT(parse_value("1fF"), close_rel(1e-15, 1e-15));
}

TEST_CASE("units: plain and exponent numbers", "[units]") {
  CHECK(parse_value("1e-3") == 1e-3);
  CHECK(parse_value("4990") == 4990.0);
  CHECK(parse_value("-15m") == -15e-3);
  CHECK(parse_value("+2.5") == 2.5);
  CHECK(parse_value("  2.5k  ") == 2500.0);
}

TEST_CASE("units: percent and ppm are relative quantities", "[units]") {
  const auto percent = parse_quantity("1%");
  CHECK(percent.relative);
  CHECK_THAT(percent.value, close_rel(0.01, 1e-15));
  const auto tenth = parse_quantity("0.1 %");
  CHECK(tenth.relative);
  CHECK_THAT(tenth.value, close_rel(0.001, 1e-15));
  const auto ppm = parse_quantity("50ppm");
  CHECK(ppm.relative);
  CHECK_THAT(ppm.value, close_rel(50e-6, 1e-15));
  const auto absolute = parse_quantity("1e-3");
  CHECK_FALSE(absolute.relative);
  CHECK(absolute.value == 1e-3);
  const auto prefixed = parse_quantity("50u");
  CHECK_FALSE(prefixed.relative);
  CHECK_THAT(prefixed.value, close_rel(50e-6, 1e-15));
  // A bare value has no place for a percent sign.
  CHECK_THROWS_AS(parse_value("1%"), DesignError);
}

TEST_CASE("units: malformed numbers throw DesignError naming the text", "[units]") {
  for (const std::string text : {"4.9.9k", "1Meg", "abc", "inf", "nan", "1e999", "k", "4k7k"}) {
    INFO("text: " << text);
    CHECK_THROWS_AS(parse_value(text), DesignError);
    CHECK_THROWS_WITH(parse_value(text), Catch::Contains("'" + text + "'"));
    CHECK_THROWS_WITH(parse_quantity(text + "%"), Catch::Contains("'" + text + "%'"));
  }
  CHECK_THROWS_AS(parse_value(""), DesignError);
  CHECK_THROWS_WITH(parse_value(""), Catch::Contains("''") && Catch::Contains("empty"));
  CHECK_THROWS_WITH(parse_value("   "), Catch::Contains("empty"));
  CHECK_THROWS_WITH(parse_quantity("%"), Catch::Contains("'%'"));
}

TEST_CASE("units: format_si picks the prefix that keeps 1 to 999 before it", "[units]") {
  CHECK(format_si(4990.0) == "4.99k");
  CHECK(format_si(100e-9) == "100n");
  CHECK(format_si(2.2e-6) == "2.2u");
  CHECK(format_si(-4700.0) == "-4.7k");
  CHECK(format_si(1e6) == "1M");
  CHECK(format_si(15e-3) == "15m");
  CHECK(format_si(1.0) == "1");
  CHECK(format_si(0.0) == "0");
  CHECK(format_si(12345.0, 3) == "12.3k");
  CHECK(format_si(47e-12) == "47p");
}

TEST_CASE("units: a value rounded up to 1000 moves to the next prefix", "[units]") {
  // 999.99e-6 at three significant digits is 1.00e-3: "1m", not "1e+03u".
  CHECK(format_si(999.99e-6, 3) == "1m");
  CHECK(format_si(999.96, 4) == "1k");
  CHECK(format_si(-999.96, 4) == "-1k");
}

TEST_CASE("units: format_si output reads back as the same value", "[units]") {
  for (const double v : {1.5e-14, 3.3e-12, 4.7e-9, 2.2e-6, 1e-3, 0.5, 1.0, 49.9, 4990.0, 1.5e6,
                         2.2e9, 7.5e11, -0.018, -2.5e4}) {
    INFO("value: " << v);
    CHECK_THAT(parse_value(format_si(v, 15)), close_rel(v, 1e-13));
  }
}
