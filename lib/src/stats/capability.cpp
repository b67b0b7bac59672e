// Capability indices with intervals, and the normal-fit yield.
#include "lotwise/capability.hpp"

#include <algorithm>
#include <cmath>
#include <utility>

#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/normal.hpp>

#include "lotwise/error.hpp"

namespace lotwise {

Capability capability(double lsl, double usl, double mean, double std_dev, std::uint64_t n,
                      double confidence) {
  if (!(confidence > 0.0 && confidence < 1.0)) {
    throw Error("confidence level must lie strictly between 0 and 1");
  }
  Capability c;
  if (!(std_dev > 0.0) || !std::isfinite(std_dev) || !std::isfinite(mean) || n < 2) return c;
  const bool has_low = std::isfinite(lsl);
  const bool has_high = std::isfinite(usl);
  if (!has_low && !has_high) return c;
  if (has_high) c.cpu = (usl - mean) / (3.0 * std_dev);
  if (has_low) c.cpl = (mean - lsl) / (3.0 * std_dev);
  c.cpk = !has_low ? c.cpu : !has_high ? c.cpl : std::min(c.cpu, c.cpl);
  const double alpha = 1.0 - confidence;
  const double dof = static_cast<double>(n - 1);
  if (has_low && has_high) {
    c.cp = (usl - lsl) / (6.0 * std_dev);
    const boost::math::chi_squared_distribution<double> chi2(dof);
    c.cp_interval.low = c.cp * std::sqrt(boost::math::quantile(chi2, alpha / 2.0) / dof);
    c.cp_interval.high = c.cp * std::sqrt(boost::math::quantile(chi2, 1.0 - alpha / 2.0) / dof);
  }
  const double z =
      boost::math::quantile(boost::math::normal_distribution<double>(), 1.0 - alpha / 2.0);
  const double nd = static_cast<double>(n);
  const double half =
      z * std::sqrt(1.0 / (9.0 * nd * c.cpk * c.cpk) + 1.0 / (2.0 * dof));
  c.cpk_interval.low = c.cpk * (1.0 - half);
  c.cpk_interval.high = c.cpk * (1.0 + half);
  // A negative Cpk flips the ordering of its bounds.
  if (c.cpk_interval.low > c.cpk_interval.high) std::swap(c.cpk_interval.low, c.cpk_interval.high);
  return c;
}

double normal_fit_yield(double lsl, double usl, double mean, double std_dev) {
  if (!(std_dev > 0.0) || !std::isfinite(std_dev) || !std::isfinite(mean)) {
    return std::numeric_limits<double>::quiet_NaN();
  }
  // Upper-tail forms keep precision when the yield is close to 1.
  const boost::math::normal_distribution<double> law(mean, std_dev);
  const double below = std::isfinite(lsl) ? boost::math::cdf(law, lsl) : 0.0;
  const double above = std::isfinite(usl) ? boost::math::cdf(boost::math::complement(law, usl)) : 0.0;
  return 1.0 - below - above;
}

}  // namespace lotwise
