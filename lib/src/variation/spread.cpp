#include "variation/spread.hpp"

#include <cmath>
#include <limits>

#include <boost/math/distributions/triangular.hpp>
#include <boost/math/special_functions/erf.hpp>

namespace lotwise {
namespace detail {
namespace {

namespace bmp = boost::math::policies;
// No exceptions (nothing may throw or allocate per sample) and plain double arithmetic.
using Quiet = bmp::policy<bmp::domain_error<bmp::ignore_error>, bmp::pole_error<bmp::ignore_error>,
                          bmp::overflow_error<bmp::ignore_error>,
                          bmp::evaluation_error<bmp::ignore_error>, bmp::promote_double<false>>;

constexpr double sqrt2 = 1.41421356237309504880;

// Inverse of a normal law of standard deviation `sigma` cut to the probability interval
// [low, low + width] (symmetric about 0), at u in [0, 1]. The upper half is mirrored
// so that no probability close to 1 is ever formed.
double truncated(double sigma, double low, double width, double u) {
  if (u < 0.5) return sigma * normal_quantile(low + u * width);
  return -sigma * normal_quantile(low + (1.0 - u) * width);
}

}  // namespace

double normal_cdf(double z) { return 0.5 * boost::math::erfc(-z / sqrt2, Quiet()); }

// The fast path for the normal quantile: M. J. Wichura, "Algorithm AS 241: the
// percentage points of the normal distribution", Applied Statistics 37(3), 1988 (PPND16),
// accurate to about 1e-16 relative; tests/cpp/variation pin it to Boost.Math's erfc_inv.
double normal_quantile(double p) {
  if (!(p > 0.0 && p < 1.0)) {
    if (p == 0.0) return -std::numeric_limits<double>::infinity();
    if (p == 1.0) return std::numeric_limits<double>::infinity();
    return std::numeric_limits<double>::quiet_NaN();
  }
  const double q = p - 0.5;
  if (std::abs(q) <= 0.425) {
    const double r = 0.180625 - q * q;
    return q *
           (((((((2509.0809287301226727 * r + 33430.575583588128105) * r + 67265.770927008700853) * r +
                45921.953931549871457) * r + 13731.693765509461125) * r + 1971.5909503065514427) * r +
             133.14166789178437745) * r + 3.387132872796366608) /
           (((((((5226.495278852545925 * r + 28729.085735721942674) * r + 39307.89580009271061) * r +
                21213.794301586595867) * r + 5394.1960214247511077) * r + 687.1870074920579083) * r +
             42.313330701600911252) * r + 1.0);
  }
  double r = std::sqrt(-std::log(q < 0.0 ? p : 1.0 - p));
  double x;
  if (r <= 5.0) {
    r -= 1.6;
    x = (((((((7.7454501427834140764e-4 * r + 0.0227238449892691845833) * r + 0.24178072517745061177) * r +
             1.27045825245236838258) * r + 3.64784832476320460504) * r + 5.7694972214606914055) * r +
          4.6303378461565452959) * r + 1.42343711074968357734) /
        (((((((1.05075007164441684324e-9 * r + 5.475938084995344946e-4) * r + 0.0151986665636164571966) * r +
             0.14810397642748007459) * r + 0.68976733498510000455) * r + 1.6763848301838038494) * r +
          2.05319162663775882187) * r + 1.0);
  } else {
    r -= 5.0;
    x = (((((((2.01033439929228813265e-7 * r + 2.71155556874348757815e-5) * r + 0.0012426609473880784386) * r +
             0.026532189526576123093) * r + 0.29656057182850489123) * r + 1.7848265399172913358) * r +
          5.4637849111641143699) * r + 6.6579046435011037772) /
        (((((((2.04426310338993978564e-15 * r + 1.4215117583164458887e-7) * r + 1.8463183175100546818e-5) * r +
             7.868691311456132591e-4) * r + 0.0148753612908506148525) * r + 0.13692988092273580531) * r +
          0.59983220655588793769) * r + 1.0);
  }
  return q < 0.0 ? -x : x;
}

Spread make_spread(Distribution kind, double t, double k, double inner) {
  Spread s;
  s.kind = kind;
  switch (kind) {
    case Distribution::normal: s.scale = t / k; break;
    case Distribution::uniform:
    case Distribution::triangular: s.scale = t; break;
    case Distribution::truncated_normal:
      s.scale = t / k;
      s.low = normal_cdf(-k);
      s.width = 1.0 - 2.0 * s.low;
      break;
    case Distribution::log_normal: s.scale = std::log1p(t) / k; break;
    case Distribution::binned:
      // Each side band runs from the outer limit -t to the inner limit -inner.
      s.scale = t / k;
      s.low = normal_cdf(-k);
      s.width = normal_cdf(-inner / s.scale) - s.low;
      break;
    case Distribution::fixed: break;
  }
  return s;
}

double Spread::map_shaped(double x) const {
  switch (kind) {
    case Distribution::normal: return scale * x;
    case Distribution::uniform: return scale * (2.0 * x - 1.0);
    case Distribution::triangular:
      return boost::math::quantile(
          boost::math::triangular_distribution<double, Quiet>(-scale, 0.0, scale), x);
    case Distribution::truncated_normal: return truncated(scale, low, width, x);
    case Distribution::log_normal: return std::expm1(scale * x);
    case Distribution::binned:
      // The lower band [-t, -inner] takes u < 1/2, the mirrored upper band the rest.
      return x < 0.5 ? scale * normal_quantile(low + 2.0 * x * width)
                     : -scale * normal_quantile(low + 2.0 * (1.0 - x) * width);
    case Distribution::fixed: return 0.0;
  }
  return 0.0;
}

}  // namespace detail

const char* to_string(Distribution distribution) {
  switch (distribution) {
    case Distribution::normal: return "normal";
    case Distribution::uniform: return "uniform";
    case Distribution::truncated_normal: return "truncated_normal";
    case Distribution::triangular: return "triangular";
    case Distribution::log_normal: return "log_normal";
    case Distribution::binned: return "binned";
    case Distribution::fixed: return "fixed";
  }
  return "?";
}

}  // namespace lotwise
