#pragma once
// Trade conventions for part values: the preferred-value series of IEC 60063 and the
// tolerance letter codes of IEC 60062.
#include <string>
#include <string_view>
#include <vector>

namespace lotwise {

/// A preferred-value series: E3 to E192 values per decade.
enum class PreferredSeries { e3, e6, e12, e24, e48, e96, e192 };

/// "E24" and so on.
const char* to_string(PreferredSeries series);
/// Reads "E24" or "e24"; throws DesignError naming the valid series.
PreferredSeries parse_series(std::string_view text);

/// One decade of the series as mantissas in [1, 10), ascending: E24 gives 1.0, 1.1, ...,
/// 9.1; E96 gives 1.00, 1.02, ..., 9.76.
const std::vector<double>& series_decade(PreferredSeries series);

/// Every series value in [low, high] (both > 0), ascending, e.g. E12 from 1k to 10k.
std::vector<double> preferred_values(PreferredSeries series, double low, double high);

/// The series value nearest to `value` (> 0) in ratio, i.e. on a log scale.
double nearest_preferred(double value, PreferredSeries series);

/// True if `value` is a series value within a relative `tolerance`.
bool is_preferred(double value, PreferredSeries series, double tolerance = 1e-9);

/// The relative tolerance of an IEC 60062 letter code ("F" -> 0.01); throws DesignError
/// for a text that is not one of L P W B C D F G J K M.
double tolerance_of_letter(std::string_view code);

/// The IEC 60062 letter of a relative tolerance (0.01 -> "F"), or "" if it has none.
std::string letter_of_tolerance(double fraction);

}  // namespace lotwise
