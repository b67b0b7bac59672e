// Binomial proportion intervals for yield and per-spec pass fractions.
#include <cmath>
#include <string>

#include <boost/math/distributions/normal.hpp>
#include <boost/math/special_functions/beta.hpp>

#include "lotwise/error.hpp"
#include "lotwise/statistics.hpp"

namespace lotwise {
namespace {

void check(std::uint64_t k, std::uint64_t n, double confidence) {
  if (n == 0) throw Error("a binomial interval needs at least one trial");
  if (k > n) throw Error("a binomial interval needs successes <= trials");
  if (!(confidence > 0.0 && confidence < 1.0)) {
    throw Error("confidence level must lie strictly between 0 and 1 (got " +
                std::to_string(confidence) + ")");
  }
}

}  // namespace

// Clopper & Pearson, Biometrika 26(4), 1934: the bounds are beta quantiles,
// lower = B^-1(alpha/2; k, n-k+1), upper = B^-1(1-alpha/2; k+1, n-k).
Interval clopper_pearson(std::uint64_t k, std::uint64_t n, double confidence) {
  check(k, n, confidence);
  const double alpha = 1.0 - confidence;
  const double kd = static_cast<double>(k);
  const double nd = static_cast<double>(n);
  Interval ci;
  ci.low = k == 0 ? 0.0 : boost::math::ibeta_inv(kd, nd - kd + 1.0, alpha / 2.0);
  ci.high = k == n ? 1.0 : boost::math::ibeta_inv(kd + 1.0, nd - kd, 1.0 - alpha / 2.0);
  return ci;
}

// Wilson, JASA 22, 1927: the score interval.
Interval wilson(std::uint64_t k, std::uint64_t n, double confidence) {
  check(k, n, confidence);
  const double z =
      boost::math::quantile(boost::math::normal_distribution<double>(), 1.0 - (1.0 - confidence) / 2.0);
  const double nd = static_cast<double>(n);
  const double p = static_cast<double>(k) / nd;
  const double z2 = z * z;
  const double centre = (p + z2 / (2.0 * nd)) / (1.0 + z2 / nd);
  const double half = z / (1.0 + z2 / nd) * std::sqrt(p * (1.0 - p) / nd + z2 / (4.0 * nd * nd));
  Interval ci;
  ci.low = k == 0 ? 0.0 : centre - half;
  ci.high = k == n ? 1.0 : centre + half;
  return ci;
}

// Jeffreys: equal-tailed Beta(k + 1/2, n - k + 1/2) quantiles, with the conventional
// ends at k = 0 and k = n (Brown, Cai & DasGupta 2001).
Interval jeffreys(std::uint64_t k, std::uint64_t n, double confidence) {
  check(k, n, confidence);
  const double alpha = 1.0 - confidence;
  const double a = static_cast<double>(k) + 0.5;
  const double b = static_cast<double>(n - k) + 0.5;
  Interval ci;
  ci.low = k == 0 ? 0.0 : boost::math::ibeta_inv(a, b, alpha / 2.0);
  ci.high = k == n ? 1.0 : boost::math::ibeta_inv(a, b, 1.0 - alpha / 2.0);
  return ci;
}

double clopper_pearson_upper(std::uint64_t k, std::uint64_t n, double confidence) {
  check(k, n, confidence);
  if (k == n) return 1.0;
  // k = 0 in closed form: (1 - p)^n = alpha.
  if (k == 0) return -std::expm1(std::log(1.0 - confidence) / static_cast<double>(n));
  const double kd = static_cast<double>(k);
  return boost::math::ibeta_inv(kd + 1.0, static_cast<double>(n) - kd, confidence);
}

const char* to_string(IntervalMethod method) {
  switch (method) {
    case IntervalMethod::clopper_pearson: return "clopper_pearson";
    case IntervalMethod::wilson: return "wilson";
    case IntervalMethod::jeffreys: return "jeffreys";
  }
  return "?";
}

Interval binomial_interval(IntervalMethod method, std::uint64_t k, std::uint64_t n,
                           double confidence) {
  switch (method) {
    case IntervalMethod::clopper_pearson: return clopper_pearson(k, n, confidence);
    case IntervalMethod::wilson: return wilson(k, n, confidence);
    case IntervalMethod::jeffreys: return jeffreys(k, n, confidence);
  }
  throw Error("unknown interval method");
}

}  // namespace lotwise
