#pragma once
// Process capability of a measurement against its spec limits, with confidence intervals,
// and the yield a normal fit to the measurement predicts.
#include <cstdint>
#include <limits>

#include "lotwise/statistics.hpp"

namespace lotwise {

/// Capability indices (NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6):
///   Cp = (USL - LSL) / (6 s),  Cpu = (USL - mean) / (3 s),  Cpl = (mean - LSL) / (3 s),
///   Cpk = min(Cpu, Cpl).
/// A one-sided spec has no Cp (NaN) and Cpk is the index of its one limit. The Monte Carlo
/// builds are one population with every source of spread in it, so s is the overall
/// standard deviation and these equal the performance indices Pp and Ppk.
struct Capability {
  double cp = std::numeric_limits<double>::quiet_NaN();
  double cpk = std::numeric_limits<double>::quiet_NaN();
  double cpu = std::numeric_limits<double>::quiet_NaN();
  double cpl = std::numeric_limits<double>::quiet_NaN();
  /// Cp interval from the chi-square law of s^2: Cp sqrt(chi2_{a/2, n-1} / (n - 1)) to
  /// Cp sqrt(chi2_{1-a/2, n-1} / (n - 1)) (Montgomery, Introduction to Statistical
  /// Quality Control, ch. 8).
  Interval cp_interval{std::numeric_limits<double>::quiet_NaN(),
                       std::numeric_limits<double>::quiet_NaN()};
  /// Cpk interval by Bissell's normal approximation (Applied Statistics 39(3), 1990):
  /// Cpk (1 +- z sqrt(1 / (9 n Cpk^2) + 1 / (2 (n - 1)))).
  Interval cpk_interval{std::numeric_limits<double>::quiet_NaN(),
                        std::numeric_limits<double>::quiet_NaN()};
};

/// Capability of a sample of `n` values with the given mean and standard deviation
/// against limits `lsl`, `usl` (an infinite limit is absent). NaN fields where an index
/// is undefined (no limit on that side, s not positive, n < 2).
Capability capability(double lsl, double usl, double mean, double std_dev, std::uint64_t n,
                      double confidence = 0.95);

/// Fraction of a normal law N(mean, std_dev^2) within [lsl, usl]: the yield a normal fit
/// predicts, to set beside the observed one (a skewed or clipped measurement shows up as
/// a difference). NaN if std_dev is not positive and finite.
double normal_fit_yield(double lsl, double usl, double mean, double std_dev);

}  // namespace lotwise
