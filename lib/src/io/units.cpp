// Engineering notation: SI prefixes, RKM codes (IEC 60062: "4k7" = 4.7 k), percent and ppm.
#include "lotwise/units.hpp"

#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>

#include "lotwise/error.hpp"

namespace lotwise {
namespace {

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

// Multiplier of an SI prefix at the start of `s`; sets `length` to its byte length.
double prefix(std::string_view s, std::size_t& length) {
  length = 1;
  if (s.empty()) { length = 0; return 1.0; }
  if (s.substr(0, 2) == "\xC2\xB5" || s.substr(0, 2) == "\xCE\xBC") { length = 2; return 1e-6; }
  switch (s.front()) {
    case 'f': return 1e-15;
    case 'p': return 1e-12;
    case 'n': return 1e-9;
    case 'u': return 1e-6;
    case 'm': return 1e-3;
    case 'k': return 1e3;
    case 'M': return 1e6;
    case 'G': return 1e9;
    case 'T': return 1e12;
    default: length = 0; return 1.0;
  }
}

bool is_unit_word(std::string_view s) {
  return s == "ohm" || s == "ohms" || s == "\xCE\xA9" || s == "F" || s == "H" || s == "V" ||
         s == "A" || s == "Hz" || s == "s" || s == "S" || s == "R";
}

[[noreturn]] void malformed(std::string_view text, const char* why) {
  throw DesignError("malformed number '" + std::string(text) + "': " + why +
                    " (write e.g. 4990, 4.99k, 4k99, 100n, 2.2u, 1e-3)");
}

// RKM code: digits, one of R k M G m u n p, digits ("4k7", "2R2", "1M5").
bool parse_rkm(std::string_view s, double& out) {
  const std::size_t at = s.find_first_of("RkMGmunp");
  // The letter marks the decimal point; it may lead ("R47" = 0.47) but not trail.
  if (at == std::string_view::npos || at + 1 >= s.size()) return false;
  for (std::size_t i = 0; i < s.size(); ++i) {
    if (i != at && (s[i] < '0' || s[i] > '9')) return false;
  }
  std::size_t len = 0;
  const double scale = s[at] == 'R' ? 1.0 : prefix(s.substr(at), len);
  const std::string digits =
      (at == 0 ? std::string("0") : std::string(s.substr(0, at))) + "." + std::string(s.substr(at + 1));
  double value = 0.0;
  std::from_chars(digits.data(), digits.data() + digits.size(), value);
  out = value * scale;
  return true;
}

double parse_number(std::string_view original, std::string_view s) {
  double rkm = 0.0;
  if (parse_rkm(s, rkm)) return rkm;
  double value = 0.0;
  const char* first = s.data();
  const char* last = s.data() + s.size();
  if (first != last && *first == '+') ++first;
  const auto result = std::from_chars(first, last, value);
  if (result.ec != std::errc() || result.ptr == first) malformed(original, "no number at the start");
  std::string_view rest(result.ptr, static_cast<std::size_t>(last - result.ptr));
  rest = trim(rest);
  if (!rest.empty()) {
    std::size_t len = 0;
    const double scale = prefix(rest, len);
    std::string_view unit = rest.substr(len);
    if (len > 0 && (unit.empty() || is_unit_word(unit))) {
      value *= scale;
    } else if (!is_unit_word(rest)) {
      malformed(original, "unknown suffix");
    }
  }
  if (!std::isfinite(value)) malformed(original, "not a finite number");
  return value;
}

}  // namespace

double parse_value(std::string_view text) {
  const std::string_view s = trim(text);
  if (s.empty()) malformed(text, "empty");
  return parse_number(text, s);
}

Quantity parse_quantity(std::string_view text) {
  std::string_view s = trim(text);
  if (s.empty()) malformed(text, "empty");
  if (s.back() == '%') {
    s.remove_suffix(1);
    return {parse_number(text, trim(s)) / 100.0, true};
  }
  if (s.size() > 3 && s.substr(s.size() - 3) == "ppm") {
    s.remove_suffix(3);
    return {parse_number(text, trim(s)) * 1e-6, true};
  }
  return {parse_number(text, s), false};
}

std::string format_si(double value, int digits) {
  if (value == 0.0 || !std::isfinite(value)) {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%.*g", digits, value);
    return buf;
  }
  static const char* prefixes[] = {"f", "p", "n", "u", "m", "", "k", "M", "G", "T"};
  int exponent = static_cast<int>(std::floor(std::log10(std::abs(value)) / 3.0));
  exponent = std::max(-5, std::min(4, exponent));
  double scaled = value / std::pow(10.0, 3 * exponent);
  char buf[48];
  // Rounding to `digits` may carry 999.96 up to 1000 (printed "1e+03" by %g): show
  // that as 1 with the next prefix.
  std::snprintf(buf, sizeof buf, "%.*g", digits, scaled);
  if (std::abs(std::strtod(buf, nullptr)) >= 1000.0 && exponent < 4) {
    ++exponent;
    scaled = value / std::pow(10.0, 3 * exponent);
  }
  std::snprintf(buf, sizeof buf, "%.*g%s", digits, scaled, prefixes[exponent + 5]);
  return buf;
}

}  // namespace lotwise
