#pragma once
// Private: the laws of a deviation as maps from one standard coordinate to a deviation,
// each through its inverse distribution function (Boost.Math).
#include "lotwise/variation.hpp"

namespace lotwise::detail {

/// Standard normal distribution function (Boost.Math erfc) and its inverse (Wichura's
/// AS 241, checked against Boost.Math erfc_inv). Neither allocates or throws.
double normal_cdf(double z);
double normal_quantile(double p);

/// One compiled law. `map` takes a standard normal z when wants_normal(), else a uniform
/// u in [0, 1], and returns the deviation in the unit of the tolerance it was made from.
struct Spread {
  Distribution kind = Distribution::fixed;
  double scale = 0.0;  ///< sigma (normal shapes), half-width (uniform, triangular), s (log_normal)
  double low = 0.0;    ///< truncated_normal, binned: probability below the lower limit
  double width = 0.0;  ///< truncated_normal: probability within the limits; binned: of one side band

  bool wants_normal() const {
    return kind == Distribution::normal || kind == Distribution::log_normal;
  }
  double map(double x) const {
    // The two plain laws inline: they are most terms of most studies.
    if (kind == Distribution::normal) return scale * x;
    if (kind == Distribution::uniform) return scale * (2.0 * x - 1.0);
    return map_shaped(x);
  }
  /// map() through the full switch of laws (any kind).
  double map_shaped(double x) const;
};

/// Compiles a law with tolerance t, sigmas k and (binned) inner band half-width. The
/// arguments must have passed validate_variation.
Spread make_spread(Distribution kind, double tolerance, double sigmas, double inner = 0.0);

}  // namespace lotwise::detail
