#pragma once
// Local sensitivities at nominal and the worst-case figures reviews ask for: extreme-value
// analysis (EVA), root-sum-square (RSS) and, with few parameters, every corner.
#include <cstddef>
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "lotwise/measurement.hpp"
#include "lotwise/result.hpp"

namespace lotwise {

class Study;

/// The tolerance of one parameter a variation spreads, in the parameter's unit.
struct ParameterTolerance {
  std::string name;
  std::size_t index = 0;  ///< position in Study::parameter_names()
  double nominal = 0.0;
  /// Tolerance limits: nominal -+ (tolerance + lot tolerance), in the parameter's unit
  /// (log-normal: nominal / (1 + t) and nominal (1 + t)).
  double low = 0.0;
  double high = 0.0;
  /// Standard deviation of the value (part and lot spreads combined, each from its law).
  double std_dev = 0.0;
};

/// Every parameter a variation gives a tolerance to, in parameter order. Parameters that
/// move only with temperature are left out: extreme-value and RSS figures here are for
/// the initial tolerance at the reference temperature.
std::vector<ParameterTolerance> parameter_tolerances(const Study& study);

/// Worst-case figures of one measurement.
struct MeasurementWorstCase {
  std::string name;
  MeasurementKind kind = MeasurementKind::gain;
  double nominal = 0.0;
  /// d(measurement)/d(parameter) at nominal, one per ParameterTolerance (central
  /// differences). For cmrr, whose nominal value is often infinite, these are the
  /// sensitivities of the signed common-mode gain that sets it.
  std::vector<double> sensitivities;
  /// True if the EVA directions came from a signed quantity standing in for the
  /// measurement (cmrr: the common-mode gain); see `low` below.
  bool through_common_mode = false;
  /// First-order extremes: nominal + the sum over parameters of the larger (or smaller)
  /// of s (high - nominal) and s (low - nominal). NaN for cmrr.
  double linear_low = std::numeric_limits<double>::quiet_NaN();
  double linear_high = std::numeric_limits<double>::quiet_NaN();
  /// Extreme-value analysis: the measurement evaluated with every parameter at the limit
  /// its sensitivity points to (for `high`; the opposite limits for `low`); a parameter
  /// with zero sensitivity stays at nominal. For cmrr both vertices of the common-mode
  /// gain (largest and smallest) are evaluated and `low` is the lower CMRR of the two,
  /// `high` the nominal (perfect matching lies within the tolerances).
  double low = std::numeric_limits<double>::quiet_NaN();
  double high = std::numeric_limits<double>::quiet_NaN();
  /// Root-sum-square: standard deviation sqrt(sum (s std_dev)^2) and half-width
  /// sqrt(sum (s (high - low) / 2)^2) of the tolerance band. NaN for cmrr.
  double rss_std_dev = std::numeric_limits<double>::quiet_NaN();
  double rss_half_width = std::numeric_limits<double>::quiet_NaN();
  /// Share of each parameter in the first-order variance, (s std_dev)^2 / sum.
  std::vector<double> variance_shares;
  /// Smallest and largest value over all 2^n corners (NaN when not enumerated).
  double corner_low = std::numeric_limits<double>::quiet_NaN();
  double corner_high = std::numeric_limits<double>::quiet_NaN();
};

struct WorstCaseOptions {
  /// Enumerate every corner when there are at most this many parameters (2^n solves).
  std::size_t max_exhaustive = 12;
  /// Central-difference step as a fraction of each parameter's tolerance half-width.
  double relative_step = 1e-3;
};

struct WorstCaseResult {
  std::vector<ParameterTolerance> parameters;
  std::vector<MeasurementWorstCase> measurements;
  bool exhaustive = false;  ///< corners enumerated
  std::uint64_t corners = 0;
};

/// Local sensitivities, EVA (verified by evaluating each vertex), RSS and, for few
/// parameters, every corner, for each measurement of the study. Throws RunError if a
/// vertex cannot be evaluated (a singular circuit).
WorstCaseResult worst_case(const Study& study, const WorstCaseOptions& options = {});

/// The worst-case figures as plain text, one row per measurement, with the Monte Carlo
/// quantiles beside them when `monte_carlo` is given; then the sensitivity table.
std::string worst_case_table(const WorstCaseResult& result,
                             const YieldResult* monte_carlo = nullptr);

}  // namespace lotwise
