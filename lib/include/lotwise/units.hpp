#pragma once
// Numbers as engineers write them: "4.99k", "100n", "2.2u", "1%", "50ppm", "1e-3".
#include <string>
#include <string_view>

namespace lotwise {

/// A parsed quantity. `relative` is true for "%" and "ppm" values, which are stored
/// as fractions (1 % -> 0.01).
struct Quantity {
  double value = 0.0;
  bool relative = false;
};

/// Parses a number with an optional SI prefix (f p n u µ m k M G T) and an optional
/// trailing unit word that is ignored if it is one of ohm, F, H, V, A, Hz, s.
/// Throws DesignError naming the text on anything else.
double parse_value(std::string_view text);

/// Like parse_value, but also accepts a trailing "%" or "ppm", returned as a fraction.
Quantity parse_quantity(std::string_view text);

/// Formats a value with an SI prefix and `digits` significant digits ("4.99k").
std::string format_si(double value, int digits = 4);

}  // namespace lotwise
