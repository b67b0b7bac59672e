#pragma once
// How parameters spread from part to part, from lot to lot, within a matched network,
// together (correlation), and with temperature.
#include <string>
#include <utility>
#include <vector>

namespace lotwise {

/// The law of a deviation. Each maps one standard random coordinate (standard normal,
/// or uniform on (0, 1)) to a deviation through its inverse distribution function; t is
/// the tolerance and k the `sigmas` of the variation.
enum class Distribution {
  normal,            ///< Gaussian, standard deviation t / k
  uniform,           ///< flat within +-t
  truncated_normal,  ///< Gaussian of standard deviation t / k, cut at +-t (parts screened to t)
  triangular,        ///< symmetric triangle on +-t
  log_normal,        ///< value = nominal * exp(s z), s = ln(1 + t) / k; median at nominal
  /// A wider class with the tighter parts sorted out: a normal law of standard deviation
  /// t / k, cut at +-t, with the band +-inner_tolerance removed (a 5 % part that failed
  /// the 1 % sort).
  binned,
  fixed,             ///< no spread (the parameter may still drift with temperature)
};

const char* to_string(Distribution distribution);

/// A spread applied to every parameter whose name matches one of `targets`.
/// A target is a parameter name or a pattern in which '*' matches any run of
/// characters other than '.': "R*" selects R1, RG, ...; "U*.offset" every op-amp offset.
///
/// The value of a covered parameter in one build at temperature T is
///   (nominal + D) * (1 + a (T - T_ref)) + b (T - T_ref)
/// where D is the sum of its deviations (part, lot, matched-network share) in the
/// parameter's unit, and a (relative) or b (absolute) its temperature coefficient.
struct Variation {
  Variation() = default;
  /// The common case in one line: Variation({"R*"}, Distribution::normal, 0.01).
  Variation(std::vector<std::string> targets_, Distribution distribution_ = Distribution::normal,
            double tolerance_ = 0.0, bool relative_ = true, double sigmas_ = 3.0)
      : targets(std::move(targets_)),
        distribution(distribution_),
        tolerance(tolerance_),
        relative(relative_),
        sigmas(sigmas_) {}

  std::vector<std::string> targets;
  Distribution distribution = Distribution::normal;
  /// Half-width of the tolerance band: a fraction of nominal when `relative`
  /// (0.01 for 1 %), else an absolute amount in the parameter's unit.
  double tolerance = 0.0;
  bool relative = true;
  /// How many standard deviations the tolerance covers, for the laws with a normal shape
  /// (normal, truncated_normal, log_normal, binned) and normal lot or coefficient spreads.
  double sigmas = 3.0;

  /// binned: half-width of the tighter class that was sorted out, same unit as
  /// `tolerance`; 0 < inner_tolerance < tolerance.
  double inner_tolerance = 0.0;

  /// Lot-to-lot deviation, same unit as `tolerance` (0: none). All parts this variation
  /// covers in one build come from one lot (one reel) and share one lot deviation drawn
  /// from `lot_distribution` within +-lot_tolerance; each part's own deviation above
  /// comes on top.
  double lot_tolerance = 0.0;
  Distribution lot_distribution = Distribution::normal;

  /// Matched network (0: not matched). The covered parts are one network: each member's
  /// absolute spread is still `tolerance`, but the ratio of any two members spreads only
  /// by +-ratio_tolerance (relative, at `sigmas`). Needs a normal distribution, a relative
  /// tolerance and ratio_tolerance <= sqrt(2) tolerance.
  double ratio_tolerance = 0.0;

  /// Temperature coefficient: per kelvin, relative when `tempco_relative` (a TCR,
  /// 50 ppm/K = 50e-6), else absolute in the parameter's unit (an offset drift in V/K).
  double tempco = 0.0;
  bool tempco_relative = true;
  /// Part-to-part spread of the coefficient around `tempco` (same unit), drawn from
  /// `tempco_distribution` within +-tempco_tolerance. In a matched network the members
  /// share this draw and differ by `tempco_tracking` only.
  double tempco_tolerance = 0.0;
  Distribution tempco_distribution = Distribution::uniform;
  /// Matched network only: the coefficients of any two members differ by at most this
  /// (TCR tracking); each member's own share is uniform within +-tempco_tracking / 2.
  double tempco_tracking = 0.0;
};

/// Correlated deviations through a Gaussian copula: the normal scores of the part-to-part
/// deviations of every pair of the listed parameters have correlation `coefficient`.
/// For normal spreads that is the correlation of the values themselves.
struct Correlation {
  std::vector<std::string> parameters;  ///< names or patterns, at least two parameters
  double coefficient = 0.0;             ///< strictly between -1 and 1
};

/// Operating temperature, in degrees Celsius.
struct Temperature {
  /// Where nominal values and tolerances hold. 25 degC is the usual reference for
  /// temperature coefficients; resistor standards (IEC 60115-1) use 20 degC.
  double reference = 25.0;
  /// Temperatures at which every build is evaluated; a build passes only if it passes at
  /// all of them, and results are also given per temperature. Empty: at `reference`.
  std::vector<double> operating;
  /// Instead, each build draws its temperature uniformly within [low, high].
  bool drawn = false;
  double low = 0.0;
  double high = 0.0;
};

}  // namespace lotwise
