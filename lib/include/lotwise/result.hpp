#pragma once
// What a yield run reports.
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "lotwise/capability.hpp"
#include "lotwise/histogram.hpp"
#include "lotwise/measurement.hpp"
#include "lotwise/run_options.hpp"
#include "lotwise/spec.hpp"
#include "lotwise/statistics.hpp"

namespace lotwise {

struct MeasurementSummary {
  std::string name;
  MeasurementKind kind = MeasurementKind::gain;
  double nominal = 0.0;   ///< value with every parameter at nominal
  RunningStats stats;     ///< over the solvable samples
  /// Samples whose value was withheld because an op-amp it relies on saturated (not in
  /// `stats`).
  std::uint64_t saturated = 0;
  /// Standard error of the mean from the spread of the replicates' means, s_R / sqrt(R)
  /// (NaN with fewer than two replicates).
  double mean_standard_error = std::numeric_limits<double>::quiet_NaN();
  /// Distribution of the values in bounded memory: RunOptions::histogram_bins bins over a
  /// range set from the first chunk (see docs/methods.md); empty when not kept.
  Histogram histogram;
  /// Probabilistically symmetric coverage interval at the run's confidence level
  /// (JCGM 101:2008, 7.7), from the histogram; NaN ends if it runs past the range.
  Interval coverage{std::numeric_limits<double>::quiet_NaN(),
                    std::numeric_limits<double>::quiet_NaN()};
  /// Adaptive run by numerical tolerance (RunOptions::tolerance_digits): the tolerance
  /// delta of the standard deviation at the last batch (NaN otherwise or without spread).
  double numerical_tolerance = std::numeric_limits<double>::quiet_NaN();
  /// With RunOptions::builds_per_lot: the pooled within-lot standard deviation,
  /// sqrt(sum over lots of sum (x - lot mean)^2 / (n - lots)) (NaN otherwise).
  double within_lot_std_dev = std::numeric_limits<double>::quiet_NaN();
  std::uint64_t within_lot_dof = 0;  ///< its degrees of freedom, n - lots
};

struct SpecSummary {
  Spec spec;
  std::uint64_t passed = 0;
  double fraction = 0.0;  ///< passed / samples evaluated
  Interval interval;
  /// Failures of this spec on builds whose measurement was withheld for saturation.
  std::uint64_t saturated = 0;
  /// Standard error of `fraction` from the replicates (NaN with fewer than two).
  double standard_error = std::numeric_limits<double>::quiet_NaN();
  /// The pass fraction's Wilson and Jeffreys intervals beside `interval` (Clopper-Pearson).
  Interval wilson_interval;
  Interval jeffreys_interval;
  /// Capability of the spec's measurement against its limits (overall spread: Pp, Ppk).
  Capability capability;
  /// With RunOptions::builds_per_lot: the same indices from the pooled within-lot spread
  /// (Cp, Cpk); the gap to `capability` is what lot-to-lot shifts cost.
  Capability within_lot_capability;
  /// Fraction within the limits of a normal law with the measurement's mean and standard
  /// deviation, to compare with `fraction`.
  double normal_fit = std::numeric_limits<double>::quiet_NaN();
};

/// The builds' results at one operating temperature of a sweep.
struct TemperatureResult {
  double temperature = 0.0;       ///< degrees Celsius
  std::uint64_t passed = 0;       ///< builds meeting every spec at this temperature
  double yield = 0.0;
  Interval interval;              ///< Clopper-Pearson
  std::uint64_t singular = 0;
  std::uint64_t invalid_values = 0;
  std::uint64_t saturated = 0;
  std::vector<SpecSummary> specs;
  std::vector<MeasurementSummary> measurements;
};

struct YieldResult {
  std::uint64_t samples = 0;     ///< samples evaluated (fewer than asked if stopped)
  std::uint64_t requested = 0;
  std::uint64_t seed = 0;
  std::uint32_t chunk_size = 0;
  bool complete = true;          ///< false if the run was stopped early
  double confidence = 0.95;

  std::uint64_t passed = 0;      ///< builds that met every spec
  double yield = 0.0;            ///< passed / samples
  Interval interval;             ///< Clopper-Pearson at `confidence`
  Interval wilson_interval;      ///< Wilson score interval at `confidence`
  Interval jeffreys_interval;    ///< Jeffreys interval at `confidence`
  /// One-sided exact upper bound on the failure fraction at `confidence`; with no
  /// failures 1 - (1 - confidence)^(1/n), the rule of three.
  double failure_upper_bound = std::numeric_limits<double>::quiet_NaN();
  /// Adaptive run (RunOptions::target_half_width): true if it stopped because the target
  /// was met, false if it ran to the sample cap or was not adaptive.
  bool target_met = false;

  /// Global sensitivity from the samples (RunOptions::attribution): the varied
  /// parameters, and for each measurement and parameter the sample correlation of the
  /// parameter's value with the measurement (measurements x parameters, row-major; NaN
  /// where undefined). With independent parameters and a near-linear measurement this is
  /// the standardized regression coefficient, and its square the parameter's share of
  /// the variance.
  std::vector<std::string> attribution_parameters;
  std::vector<double> correlations;
  /// Failure attribution: for each varied parameter, how far its mean value in the
  /// failing builds lies from its mean over all builds, in standard deviations of all
  /// builds (NaN with no failures). A parameter pushed to one extreme in the failing
  /// builds shows a large shift.
  std::vector<double> failure_shift;
  /// For each varied parameter, the root-mean-square distance of its value in the failing
  /// builds from its mean over all builds, in standard deviations of all builds (NaN with
  /// no failures). About 1 when the parameter does not matter; above 1 when failing builds
  /// sit at its extremes, on either side (a two-sided spec fails at both).
  std::vector<double> failure_spread;
  /// Global sensitivity from a multiple linear fit of each measurement on the varied
  /// parameters over the first RunOptions::regression_samples builds: standardized
  /// regression coefficients b_j s_j / s_y (measurements x attribution_parameters,
  /// row-major). Unlike `correlations` they stay right when parameters are correlated;
  /// with a near-linear measurement their squares are the variance shares. NaN where
  /// undefined.
  std::vector<double> standardized_regression;
  /// Per measurement, the share of its variance the linear fit explains (R^2): a value
  /// well below 1 says the measurement is not linear in the parameters and the
  /// coefficients above understate the story; look at rank_correlations then.
  std::vector<double> regression_r_squared;
  /// Spearman rank correlations of each varied parameter with each measurement over the
  /// same builds (measurements x attribution_parameters, row-major).
  std::vector<double> rank_correlations;
  /// Builds (rows, with a temperature sweep one per build and temperature) the
  /// regression and rank figures come from.
  std::uint64_t regression_rows = 0;
  /// Adaptive run by numerical tolerance: the batches taken (0 when not used).
  std::uint64_t tolerance_batches = 0;

  /// Draws that could not be evaluated; they count as failing builds.
  std::uint64_t singular = 0;       ///< circuit matrix singular for the draw
  std::uint64_t invalid_values = 0; ///< a drawn value outside its physical range (R <= 0)
  /// Builds in which an op-amp passed its output limits where a measurement assumed it
  /// linear (at the operating point, or at a trip point): the measurements relying on it
  /// were withheld and their specs failed. Such a build fails.
  std::uint64_t saturated = 0;

  std::vector<SpecSummary> specs;
  std::vector<MeasurementSummary> measurements;

  /// With RunOptions::keep_samples: samples x measurements values, row-major
  /// (NaN where a draw could not be evaluated), and each build's pass flag. With a
  /// temperature sweep there is one row per build and temperature, build-major.
  std::vector<double> values;
  std::vector<std::uint8_t> pass;
  /// The parameters variations move, in the order of `parameter_values`.
  std::vector<std::string> varied_parameters;
  /// With RunOptions::keep_samples: each row's values of varied_parameters (rows as in
  /// `values`), e.g. to plot two parameters with the failing builds marked.
  std::vector<double> parameter_values;

  Sampler sampler = Sampler::monte_carlo;
  std::uint32_t replicates = 1;   ///< independent randomisations the samples were split into
  std::uint64_t builds_per_lot = 0;  ///< RunOptions::builds_per_lot
  /// Standard error of `yield` from the spread of the replicates' yields, s_R / sqrt(R),
  /// and the Student-t interval it gives at `confidence` (NaN with fewer than two
  /// replicates). For sobol and latin_hypercube these, not the Clopper-Pearson interval
  /// (which assumes independent draws), measure the sampling error.
  double yield_standard_error = std::numeric_limits<double>::quiet_NaN();
  Interval replicate_interval{std::numeric_limits<double>::quiet_NaN(),
                              std::numeric_limits<double>::quiet_NaN()};
  /// With a list of operating temperatures: the results at each. The fields above then
  /// count a build as passing only if it passes at every temperature, and measurement
  /// statistics pool all temperatures.
  std::vector<TemperatureResult> temperatures;
};

}  // namespace lotwise
