// Preferred values (IEC 60063) and tolerance letter codes (IEC 60062).
#include "lotwise/preferred_values.hpp"

#include <cmath>
#include <limits>

#include "lotwise/error.hpp"

namespace lotwise {
namespace {

// E24 as IEC 60063 tabulates it: not a rounded geometric series (3.3, not 3.2).
constexpr double e24[] = {1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                          3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1};

// E96 and E192 are round(100 * 10^(i/n)) / 100 in three digits; E192 keeps 9.20 where
// the formula gives 9.19 (the series' one exception, from memory of the IEC 60063 table).
std::vector<double> geometric(int n) {
  std::vector<double> out;
  for (int i = 0; i < n; ++i) {
    double v = std::round(100.0 * std::pow(10.0, static_cast<double>(i) / n));
    if (n == 192 && v == 919.0) v = 920.0;
    out.push_back(v / 100.0);
  }
  return out;
}

std::vector<double> every(const std::vector<double>& from, std::size_t step) {
  std::vector<double> out;
  for (std::size_t i = 0; i < from.size(); i += step) out.push_back(from[i]);
  return out;
}

std::vector<double> make(PreferredSeries s) {
  const std::vector<double> e24_list(std::begin(e24), std::end(e24));
  switch (s) {
    case PreferredSeries::e3: return every(e24_list, 8);
    case PreferredSeries::e6: return every(e24_list, 4);
    case PreferredSeries::e12: return every(e24_list, 2);
    case PreferredSeries::e24: return e24_list;
    case PreferredSeries::e48: return every(geometric(96), 2);
    case PreferredSeries::e96: return geometric(96);
    case PreferredSeries::e192: return geometric(192);
  }
  return {};
}

void check_positive(double value, const char* what) {
  if (!std::isfinite(value) || !(value > 0.0)) {
    throw DesignError(std::string(what) + " must be a positive finite number");
  }
}

// Decade exponent and the mantissa in [1, 10), robust to rounding at the decade edge.
int decade_of(double value) {
  int e = static_cast<int>(std::floor(std::log10(value)));
  if (value / std::pow(10.0, e) >= 10.0 * (1.0 - 1e-12)) ++e;
  if (value / std::pow(10.0, e) < 1.0 - 1e-12) --e;
  return e;
}

struct Letter {
  char code;
  double fraction;
};

// IEC 60062 letters of symmetric resistor tolerances: B to M as vendor tables agree;
// W, P, L from memory.
constexpr Letter letters[] = {{'L', 0.0001}, {'P', 0.0002}, {'W', 0.0005}, {'B', 0.001},
                              {'C', 0.0025}, {'D', 0.005},  {'F', 0.01},   {'G', 0.02},
                              {'J', 0.05},   {'K', 0.10},   {'M', 0.20}};

}  // namespace

const char* to_string(PreferredSeries series) {
  switch (series) {
    case PreferredSeries::e3: return "E3";
    case PreferredSeries::e6: return "E6";
    case PreferredSeries::e12: return "E12";
    case PreferredSeries::e24: return "E24";
    case PreferredSeries::e48: return "E48";
    case PreferredSeries::e96: return "E96";
    case PreferredSeries::e192: return "E192";
  }
  return "?";
}

PreferredSeries parse_series(std::string_view text) {
  for (auto s : {PreferredSeries::e3, PreferredSeries::e6, PreferredSeries::e12,
                 PreferredSeries::e24, PreferredSeries::e48, PreferredSeries::e96,
                 PreferredSeries::e192}) {
    const std::string name = to_string(s);
    std::string lower = name;
    lower[0] = 'e';
    if (text == name || text == lower) return s;
  }
  throw DesignError("unknown preferred-value series '" + std::string(text) +
                    "' (E3, E6, E12, E24, E48, E96, E192)");
}

const std::vector<double>& series_decade(PreferredSeries series) {
  static const std::vector<double> tables[] = {
      make(PreferredSeries::e3),  make(PreferredSeries::e6),  make(PreferredSeries::e12),
      make(PreferredSeries::e24), make(PreferredSeries::e48), make(PreferredSeries::e96),
      make(PreferredSeries::e192)};
  return tables[static_cast<int>(series)];
}

std::vector<double> preferred_values(PreferredSeries series, double low, double high) {
  check_positive(low, "the low end");
  check_positive(high, "the high end");
  std::vector<double> out;
  if (low > high) return out;
  const auto& decade = series_decade(series);
  for (int e = decade_of(low) - 1; e <= decade_of(high); ++e) {
    const double scale = std::pow(10.0, e);
    for (double m : decade) {
      const double v = m * scale;
      // Inclusive ends, forgiving the rounding of m * 10^e.
      if (v >= low * (1.0 - 1e-12) && v <= high * (1.0 + 1e-12)) out.push_back(v);
    }
  }
  return out;
}

double nearest_preferred(double value, PreferredSeries series) {
  check_positive(value, "a value to snap to a series");
  const int e = decade_of(value);
  double best = 0.0, best_distance = std::numeric_limits<double>::infinity();
  // Candidates from the decades either side too: 9.7 k snaps to 10 k in E12.
  for (int d = e - 1; d <= e + 1; ++d) {
    const double scale = std::pow(10.0, d);
    for (double m : series_decade(series)) {
      const double candidate = m * scale;
      const double distance = std::abs(std::log(candidate / value));
      if (distance < best_distance) {
        best_distance = distance;
        best = candidate;
      }
    }
  }
  return best;
}

bool is_preferred(double value, PreferredSeries series, double tolerance) {
  if (!std::isfinite(value) || !(value > 0.0)) return false;
  return std::abs(nearest_preferred(value, series) / value - 1.0) <= tolerance;
}

double tolerance_of_letter(std::string_view code) {
  if (code.size() == 1) {
    for (const Letter& l : letters) {
      if (l.code == code[0]) return l.fraction;
    }
  }
  throw DesignError("'" + std::string(code) + "' is not an IEC 60062 tolerance letter "
                    "(L 0.01 %, P 0.02 %, W 0.05 %, B 0.1 %, C 0.25 %, D 0.5 %, F 1 %, G 2 %, "
                    "J 5 %, K 10 %, M 20 %)");
}

std::string letter_of_tolerance(double fraction) {
  for (const Letter& l : letters) {
    if (std::abs(fraction - l.fraction) <= 1e-9 * l.fraction) return std::string(1, l.code);
  }
  return "";
}

}  // namespace lotwise
