// The readable summary printed by the command-line program and Python's repr.
#include <cmath>
#include <cstdio>
#include <sstream>
#include <string>
#include <vector>

#include "lotwise/report.hpp"
#include "lotwise/units.hpp"

namespace lotwise {
namespace {

std::string percent(double fraction) {
  char buf[32];
  if (std::isnan(fraction)) return "-";
  // Enough digits to tell 99.99 % from 100 %.
  std::snprintf(buf, sizeof buf, fraction > 0.999 && fraction < 1.0 ? "%.3f %%" : "%.2f %%",
                100.0 * fraction);
  return buf;
}

// A value in its unit: SI prefixes for V, Hz; plain digits for ratios and dB.
std::string quantity(double v, const std::string& unit) {
  if (std::isnan(v)) return "-";
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  if (unit == "V" || unit == "Hz") return format_si(v, 5) + unit;
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

std::string pad(const std::string& s, std::size_t width) {
  // Count UTF-8 code points, not bytes, so columns line up.
  std::size_t shown = 0;
  for (unsigned char c : s) shown += (c & 0xC0) != 0x80;
  return shown >= width ? s + " " : s + std::string(width - shown, ' ');
}

}  // namespace

std::string summary_table(const Study& study, const YieldResult& r) {
  std::ostringstream out;
  const std::string title = study.design().title.empty() ? "(untitled design)" : study.design().title;
  out << "lotwise yield analysis: " << title << "\n";
  out << r.samples << " samples, seed " << r.seed;
  if (!r.complete) out << "  (stopped early: " << r.samples << " of " << r.requested << ")";
  out << "\n\n";
  const int level = static_cast<int>(std::lround(100.0 * r.confidence));
  out << "Yield " << percent(r.yield);
  if (r.samples > 0) {
    out << "   " << level << " % interval [" << percent(r.interval.low) << ", "
        << percent(r.interval.high) << "]";
  }
  out << "   (" << r.passed << " of " << r.samples << " builds meet every spec)\n";
  if (r.singular + r.invalid_values > 0) {
    out << "Unevaluated builds (counted as failing): " << r.singular << " singular, "
        << r.invalid_values << " with a part value out of range\n";
  }

  if (!r.specs.empty()) {
    out << "\n" << pad("Spec", 18) << pad("Limits", 30) << pad("Pass", 11) << level
        << " % interval\n";
    for (const auto& s : r.specs) {
      std::string unit;
      for (const auto& m : r.measurements) {
        if (m.name == s.spec.measurement) unit = unit_of(m.kind);
      }
      std::string limits;
      if (s.spec.has_min() && s.spec.has_max()) {
        limits = quantity(s.spec.min, unit) + " to " + quantity(s.spec.max, unit);
      } else if (s.spec.has_min()) {
        limits = ">= " + quantity(s.spec.min, unit);
      } else {
        limits = "<= " + quantity(s.spec.max, unit);
      }
      if (unit != "V" && unit != "Hz") limits += " " + unit;
      out << pad(s.spec.measurement, 18) << pad(limits, 30) << pad(percent(s.fraction), 11);
      if (r.samples > 0) {
        out << "[" << percent(s.interval.low) << ", " << percent(s.interval.high) << "]";
      }
      out << "\n";
    }
  }

  out << "\n" << pad("Measurement", 18) << pad("Unit", 6) << pad("Nominal", 13) << pad("Mean", 13)
      << pad("Std dev", 13) << pad("Min", 13) << "Max\n";
  for (const auto& m : r.measurements) {
    const std::string unit = unit_of(m.kind);
    out << pad(m.name, 18) << pad(unit, 6) << pad(quantity(m.nominal, unit), 13)
        << pad(quantity(m.stats.mean(), unit), 13) << pad(quantity(m.stats.std_dev(), unit), 13)
        << pad(quantity(m.stats.min(), unit), 13) << quantity(m.stats.max(), unit) << "\n";
    if (m.stats.non_finite() > 0) {
      out << pad("", 18) << "(" << m.stats.non_finite() << " samples with no finite value)\n";
    }
  }
  out << "\n" << result_caution << "\n";
  return out.str();
}

}  // namespace lotwise
