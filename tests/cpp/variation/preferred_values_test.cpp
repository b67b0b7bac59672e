// Preferred values against the published IEC 60063 series, tolerance letters against
// IEC 60062.
#include <cmath>
#include <vector>

#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

void check_decade(PreferredSeries s, const std::vector<double>& expected) {
  const auto& got = series_decade(s);
  REQUIRE(got.size() == expected.size());
  for (std::size_t i = 0; i < got.size(); ++i) {
    CAPTURE(to_string(s), i);
    CHECK_THAT(got[i], close_rel(expected[i], 1e-15));
  }
}

}  // namespace

TEST_CASE("E24 and its subsets as IEC 60063 tabulates them", "[fast][preferred]") {
  // source: IEC 60063:2015, E24 (references.md [published]); not a rounded geometric series
  const std::vector<double> e24 = {1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                                   3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1};
  check_decade(PreferredSeries::e24, e24);
  // source: IEC 60063 E12, E6, E3 (common practice: every 2nd, 4th, 8th E24 value)
  check_decade(PreferredSeries::e12, {1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2});
  check_decade(PreferredSeries::e6, {1.0, 1.5, 2.2, 3.3, 4.7, 6.8});
  check_decade(PreferredSeries::e3, {1.0, 2.2, 4.7});
  // The rounded geometric series would give 2.6, 2.9, 3.2, ... : the table differs.
  CHECK(std::round(10.0 * std::pow(10.0, 12.0 / 24.0)) / 10.0 == 3.2);
}

TEST_CASE("E96, E48 and E192", "[fast][preferred]") {
  // source: IEC 60063, E96_i = round(100 * 10^(i/96)) for all 96 values (references.md)
  const auto& e96 = series_decade(PreferredSeries::e96);
  REQUIRE(e96.size() == 96);
  for (int i = 0; i < 96; ++i) {
    CHECK_THAT(e96[static_cast<std::size_t>(i)],
               close_rel(std::round(100.0 * std::pow(10.0, i / 96.0)) / 100.0, 1e-15));
  }
  // Values engineers know by heart (common practice): 4.99 k, 10.0 k, 49.9 k.
  CHECK(is_preferred(4990.0, PreferredSeries::e96));
  CHECK(is_preferred(49.9e3, PreferredSeries::e96));
  CHECK(!is_preferred(4.7e3, PreferredSeries::e96));
  // source: E48 is every second E96 value (references.md)
  const auto& e48 = series_decade(PreferredSeries::e48);
  REQUIRE(e48.size() == 48);
  for (std::size_t i = 0; i < 48; ++i) CHECK(e48[i] == e96[2 * i]);
  CHECK(e48[1] == 1.05);
  // E192: the same rule in 192 steps, E96 its every second value, and 9.20 where the
  // formula gives 9.19 (source: IEC 60063 E192 table, from memory).
  const auto& e192 = series_decade(PreferredSeries::e192);
  REQUIRE(e192.size() == 192);
  for (std::size_t i = 0; i < 96; ++i) CHECK(e192[2 * i] == e96[i]);
  CHECK(e192[185] == 9.20);
  CHECK(e192[1] == 1.01);
  CHECK(e192[191] == 9.88);
}

TEST_CASE("snapping to a series and listing a decade", "[fast][preferred]") {
  CHECK_THAT(nearest_preferred(4.83e3, PreferredSeries::e96), close_rel(4.87e3, 1e-12));
  CHECK_THAT(nearest_preferred(4.83e3, PreferredSeries::e24), close_rel(4.7e3, 1e-12));
  CHECK_THAT(nearest_preferred(9.7e3, PreferredSeries::e12), close_rel(10e3, 1e-12));
  CHECK_THAT(nearest_preferred(0.00123, PreferredSeries::e6), close_rel(0.0015, 1e-12));
  // Exact series values stay put across decades.
  for (double v : {1.0, 10.0, 100e3, 1e-9, 3.3e6}) {
    CHECK_THAT(nearest_preferred(v, PreferredSeries::e12), close_rel(v, 1e-12));
  }
  const auto decade = preferred_values(PreferredSeries::e12, 1e3, 10e3);
  REQUIRE(decade.size() == 13);  // 1.0 k ... 8.2 k and 10 k
  CHECK_THAT(decade.front(), close_rel(1e3, 1e-12));
  CHECK_THAT(decade[6], close_rel(3.3e3, 1e-12));
  CHECK_THAT(decade.back(), close_rel(10e3, 1e-12));
  CHECK(preferred_values(PreferredSeries::e96, 1e3, 9.99e3).size() == 96);
  CHECK(parse_series("E24") == PreferredSeries::e24);
  CHECK(parse_series("e192") == PreferredSeries::e192);
  CHECK_THROWS_WITH(parse_series("E25"), Catch::Contains("E3, E6, E12, E24, E48, E96, E192"));
  CHECK_THROWS_AS(nearest_preferred(-1.0, PreferredSeries::e24), DesignError);
}

TEST_CASE("tolerance letters of IEC 60062", "[fast][preferred]") {
  // source: IEC 60062:2016, B to M as vendor tables agree; W, P, L from memory
  // (references.md)
  const std::pair<const char*, double> codes[] = {{"B", 0.001}, {"C", 0.0025}, {"D", 0.005},
                                                  {"F", 0.01},  {"G", 0.02},   {"J", 0.05},
                                                  {"K", 0.10},  {"M", 0.20},   {"W", 0.0005},
                                                  {"P", 0.0002}, {"L", 0.0001}};
  for (const auto& [letter, fraction] : codes) {
    CAPTURE(letter);
    CHECK_THAT(tolerance_of_letter(letter), close_rel(fraction, 1e-15));
    CHECK(letter_of_tolerance(fraction) == letter);
  }
  CHECK(letter_of_tolerance(0.03).empty());
  CHECK_THROWS_WITH(tolerance_of_letter("Q"), Catch::Contains("not an IEC 60062 tolerance letter"));
  CHECK_THROWS_AS(tolerance_of_letter("FF"), DesignError);
}
