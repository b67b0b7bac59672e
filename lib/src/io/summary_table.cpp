// The readable summary printed by the command-line program and Python's repr.
#include <algorithm>
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
  if (r.sampler != Sampler::monte_carlo || r.replicates > 1) {
    out << ", " << to_string(r.sampler) << " sampler, " << r.replicates << " replicate"
        << (r.replicates == 1 ? "" : "s");
  }
  if (!r.complete) out << "  (stopped early: " << r.samples << " of " << r.requested << ")";
  out << "\n\n";
  const int level = static_cast<int>(std::lround(100.0 * r.confidence));
  out << "Yield " << percent(r.yield);
  if (r.samples > 0) {
    out << "   " << level << " % interval [" << percent(r.interval.low) << ", "
        << percent(r.interval.high) << "]";
  }
  out << "   (" << r.passed << " of " << r.samples << " builds meet every spec)\n";
  if (std::isfinite(r.yield_standard_error)) {
    char se[32];
    std::snprintf(se, sizeof se, "%.3g %%", 100.0 * r.yield_standard_error);
    out << "Replicate standard error " << se << "   " << level << " % replicate interval ["
        << percent(r.replicate_interval.low) << ", " << percent(r.replicate_interval.high)
        << "]\n";
  }
  if (r.singular + r.invalid_values > 0) {
    out << "Unevaluated builds (counted as failing): " << r.singular << " singular, "
        << r.invalid_values << " with a part value out of range\n";
  }
  if (r.saturated > 0) {
    out << "Saturated builds (counted as failing): " << r.saturated
        << " with an op-amp beyond its output limits where a measurement needs it linear\n";
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
      if (unit != "V" && unit != "Hz" && !unit.empty()) limits += " " + unit;
      out << pad(s.spec.measurement, 18) << pad(limits, 30) << pad(percent(s.fraction), 11);
      if (r.samples > 0) {
        out << "[" << percent(s.interval.low) << ", " << percent(s.interval.high) << "]";
      }
      if (s.saturated > 0) {
        out << "  (" << s.saturated << " failed saturated)";
      }
      out << "\n";
    }
  }

  out << "\n" << pad("Measurement", 18) << pad("Unit", 6) << pad("Nominal", 13) << pad("Mean", 13)
      << pad("Std dev", 13) << pad("Min", 13) << "Max\n";
  for (const auto& m : r.measurements) {
    const std::string unit = unit_of(m.kind);
    // No value seen (min above max, as they start): no extremes to show.
    const bool seen = m.stats.min() <= m.stats.max();
    out << pad(m.name, 18) << pad(unit, 6) << pad(quantity(m.nominal, unit), 13)
        << pad(quantity(m.stats.mean(), unit), 13) << pad(quantity(m.stats.std_dev(), unit), 13)
        << pad(seen ? quantity(m.stats.min(), unit) : "-", 13)
        << (seen ? quantity(m.stats.max(), unit) : "-") << "\n";
    if (m.stats.non_finite() > 0) {
      out << pad("", 18) << "(" << m.stats.non_finite() << " samples with no finite value)\n";
    }
    if (m.saturated > 0) {
      out << pad("", 18) << "(" << m.saturated << " samples withheld: an op-amp saturated)\n";
    }
  }
  bool any_error = false;
  for (const auto& m : r.measurements) any_error = any_error || std::isfinite(m.mean_standard_error);
  if (any_error) {
    out << "\n" << pad("Measurement", 18) << "Standard error of the mean (replicates)\n";
    for (const auto& m : r.measurements) {
      if (!std::isfinite(m.mean_standard_error)) continue;
      char se[32];
      std::snprintf(se, sizeof se, "%.3g", m.mean_standard_error);
      out << pad(m.name, 18) << se << " " << unit_of(m.kind) << "\n";
    }
  }
  if (!r.temperatures.empty()) {
    out << "\n" << pad("Temperature", 14) << pad("Yield", 11) << pad(std::to_string(level) + " % interval", 22);
    for (const auto& s : r.specs) out << pad(s.spec.measurement, 12);
    out << "\n";
    for (const auto& t : r.temperatures) {
      char celsius[32];
      std::snprintf(celsius, sizeof celsius, "%g degC", t.temperature);
      out << pad(celsius, 14) << pad(percent(t.yield), 11)
          << pad(r.samples > 0 ? "[" + percent(t.interval.low) + ", " + percent(t.interval.high) + "]"
                               : std::string("-"),
                 22);
      for (const auto& s : t.specs) out << pad(percent(s.fraction), 12);
      out << "\n";
    }
    out << "A build passes overall only if it passes at every temperature.\n";
  }
  // Distribution and capability (lotwise/capability.hpp, lotwise/histogram.hpp).
  bool any_coverage = false;
  for (const auto& m : r.measurements) any_coverage = any_coverage || m.histogram.has_range();
  if (any_coverage) {
    out << "\n" << pad("Measurement", 18) << level << " % coverage interval (JCGM 101)\n";
    for (const auto& m : r.measurements) {
      if (!m.histogram.has_range()) continue;
      const std::string unit = unit_of(m.kind);
      out << pad(m.name, 18) << "[" << quantity(m.coverage.low, unit) << ", "
          << quantity(m.coverage.high, unit) << "]" << (unit == "V" || unit == "Hz" ? "" : " " + unit)
          << "\n";
    }
  }
  if (!r.specs.empty() && r.samples > 0) {
    // With lots the overall indices are the performance indices Pp, Ppk, and the
    // within-lot Cpk follows them.
    const bool lots = r.builds_per_lot > 0;
    out << "\n" << pad("Spec", 18) << pad(lots ? "Ppk" : "Cpk", 10)
        << pad(std::to_string(level) + " % interval", 22) << pad(lots ? "Pp" : "Cp", 10)
        << (lots ? pad("Cpk in lot", 12) : std::string()) << pad("Normal fit", 13) << "Observed\n";
    for (const auto& s : r.specs) {
      char cpk[24], range[48], cp[24];
      std::snprintf(cpk, sizeof cpk, "%.3g", s.capability.cpk);
      std::snprintf(range, sizeof range, "[%.3g, %.3g]", s.capability.cpk_interval.low,
                    s.capability.cpk_interval.high);
      std::snprintf(cp, sizeof cp, "%.3g", s.capability.cp);
      out << pad(s.spec.measurement, 18) << pad(cpk, 10) << pad(range, 22) << pad(cp, 10);
      if (lots) {
        char within[24];
        std::snprintf(within, sizeof within, "%.3g", s.within_lot_capability.cpk);
        out << pad(within, 12);
      }
      out << pad(percent(s.normal_fit), 13) << percent(s.fraction) << "\n";
    }
    out << "Yield intervals: Wilson [" << percent(r.wilson_interval.low) << ", "
        << percent(r.wilson_interval.high) << "], Jeffreys [" << percent(r.jeffreys_interval.low)
        << ", " << percent(r.jeffreys_interval.high) << "]; failure fraction at most "
        << percent(r.failure_upper_bound) << " (one-sided, " << level << " %)\n";
    if (r.target_met) {
      out << (r.tolerance_batches > 0
                  ? "Stopped when every measurement's mean, spread and coverage interval were "
                    "stable to the numerical tolerance (JCGM 101 7.9), after " +
                        std::to_string(r.tolerance_batches) + " batches\n"
                  : std::string("Stopped when the yield interval reached the target half-width\n"));
    }
  }
  // The parameters that move each measurement most, and those pushed aside in failing builds.
  const std::size_t n_attr = r.attribution_parameters.size();
  if (n_attr > 0 && r.correlations.size() == n_attr * r.measurements.size() && r.samples > 1) {
    auto top = [&](auto score) {
      std::vector<std::size_t> order(n_attr);
      for (std::size_t a = 0; a < n_attr; ++a) order[a] = a;
      std::stable_sort(order.begin(), order.end(), [&](std::size_t x, std::size_t y) {
        const double sx = std::fabs(score(x)), sy = std::fabs(score(y));
        return (std::isnan(sy) && !std::isnan(sx)) || sx > sy;
      });
      std::string text;
      for (std::size_t k = 0; k < order.size() && k < 3; ++k) {
        const double v = score(order[k]);
        if (std::isnan(v)) break;
        char buf[64];
        std::snprintf(buf, sizeof buf, "%s%s %+.2f", k ? ", " : "",
                      r.attribution_parameters[order[k]].c_str(), v);
        text += buf;
      }
      return text.empty() ? std::string("-") : text;
    };
    // Standardized regression coefficients when there are enough rows: unlike plain
    // correlations they stay right for correlated parameters.
    const bool regression = r.standardized_regression.size() == n_attr * r.measurements.size() &&
                            r.regression_r_squared.size() == r.measurements.size();
    out << "\n" << pad("Measurement", 18)
        << (regression ? "Most influential parameters (standardized regression coefficient; R^2 of the linear fit)\n"
                       : "Most influential parameters (sample correlation)\n");
    for (std::size_t m = 0; m < r.measurements.size(); ++m) {
      out << pad(r.measurements[m].name, 18);
      if (regression && std::isfinite(r.regression_r_squared[m])) {
        char fit[32];
        std::snprintf(fit, sizeof fit, "; R^2 %.3f", r.regression_r_squared[m]);
        out << top([&](std::size_t a) { return r.standardized_regression[m * n_attr + a]; }) << fit << "\n";
      } else {
        out << top([&](std::size_t a) { return r.correlations[m * n_attr + a]; }) << "\n";
      }
    }
    if (r.passed < r.samples && r.failure_shift.size() == n_attr) {
      out << "Failing builds lean on (mean shift in standard deviations): "
          << top([&](std::size_t a) { return r.failure_shift[a]; }) << "\n";
    }
    if (r.passed < r.samples && r.failure_spread.size() == n_attr) {
      out << "Failing builds sit at the extremes of (RMS distance in standard deviations, 1 = "
             "typical): "
          << top([&](std::size_t a) { return r.failure_spread[a]; }) << "\n";
    }
  }
  out << "\n" << result_caution << "\n";
  return out.str();
}

}  // namespace lotwise
