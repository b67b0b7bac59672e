// Every law against its distribution function from Boost.Math by Kolmogorov-Smirnov, on
// draws large enough to notice a 1 % error in the spread.
//
// Power (source: arithmetic on the normal law): a 1 % error in sigma moves the normal
// distribution function by at most sup_x |Phi(x) - Phi(x / 1.01)| ~ 0.01 sup |x phi(x)| =
// 0.01 phi(1) = 0.00242 (at x = +-1). With n = 2^21 draws sqrt(n) * 0.00242 = 3.5, far above
// the 1 % critical value 1.63 of sqrt(n) D_n, so a law off by 1 % in sigma fails; each case
// shows it by also testing the draws against the law with the spread 1 % too wide.
#include <algorithm>
#include <cmath>
#include <functional>
#include <vector>

#include <boost/math/distributions/lognormal.hpp>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/triangular.hpp>
#include <boost/math/distributions/uniform.hpp>

#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

constexpr std::size_t n_large = std::size_t{1} << 21;
constexpr double nominal_ohms = 1000.0;

// Sorted values of RX under one variation.
std::vector<double> sorted_draws(const Variation& v, std::size_t n, std::uint64_t seed,
                                 Sampler sampler = Sampler::monte_carlo) {
  std::vector<double> xs =
      draw(resistor_probes({"RX"}, nominal_ohms), {v}, {"RX"}, n, seed, sampler).columns[0];
  std::sort(xs.begin(), xs.end());
  return xs;
}

Variation law(Distribution d, double tolerance, double sigmas = 3.0, double inner = 0.0) {
  Variation v({"RX"}, d, tolerance, true, sigmas);
  v.inner_tolerance = inner;
  return v;
}

// Fits at the 1 % level, and the same draws reject the law with its spread 1 % wider.
void check_fit(const std::vector<double>& xs, const std::function<double(double)>& right,
               const std::function<double(double)>& wider) {
  const double critical = ks_critical_1pct(xs.size());
  CHECK(ks_sorted(xs, right) < critical);
  CHECK(ks_sorted(xs, wider) > critical);
}

double phi(double z) { return boost::math::cdf(boost::math::normal_distribution<double>(), z); }

// Normal law of standard deviation sigma about 0 cut at +-limit, as a distribution
// function of the relative deviation d.
// source: truncated normal law, Johnson, Kotz & Balakrishnan, Continuous Univariate
// Distributions vol. 1, ch. 13 (from memory), built on Boost.Math's normal cdf
std::function<double(double)> truncated_cdf(double sigma, double limit) {
  const double lo = phi(-limit / sigma), hi = phi(limit / sigma);
  return [=](double d) {
    if (d <= -limit) return 0.0;
    if (d >= limit) return 1.0;
    return (phi(d / sigma) - lo) / (hi - lo);
  };
}

// The binned law: normal of standard deviation sigma cut at +-outer with the band
// +-inner removed.
std::function<double(double)> binned_cdf(double sigma, double outer, double inner) {
  const double low = phi(-outer / sigma), band = phi(-inner / sigma) - low;
  const double upper = phi(inner / sigma);
  return [=](double d) {
    if (d <= -outer) return 0.0;
    if (d >= outer) return 1.0;
    if (d < -inner) return (phi(d / sigma) - low) / (2.0 * band);
    if (d <= inner) return 0.5;
    return 0.5 + (phi(d / sigma) - upper) / (2.0 * band);
  };
}

double relative(double x) { return x / nominal_ohms - 1.0; }

}  // namespace

TEST_CASE("normal: tolerance at k sigma", "[slow][distribution]") {
  const double t = 0.01, k = 3.0, sigma = nominal_ohms * t / k;
  const auto xs = sorted_draws(law(Distribution::normal, t, k), n_large, 101);
  // source: Boost.Math normal distribution; tolerance at k sigma (common practice)
  const boost::math::normal_distribution<double> right(nominal_ohms, sigma), wide(nominal_ohms, 1.01 * sigma);
  check_fit(xs, [&](double x) { return cdf(right, x); }, [&](double x) { return cdf(wide, x); });
}

TEST_CASE("uniform: flat within the tolerance", "[slow][distribution]") {
  const double t = 0.05;
  const auto xs = sorted_draws(law(Distribution::uniform, t), n_large, 102);
  CHECK(xs.front() >= nominal_ohms * (1 - t));
  CHECK(xs.back() <= nominal_ohms * (1 + t));
  // source: Boost.Math uniform distribution
  const boost::math::uniform_distribution<double> right(nominal_ohms * (1 - t), nominal_ohms * (1 + t));
  const boost::math::uniform_distribution<double> wide(nominal_ohms * (1 - 1.01 * t), nominal_ohms * (1 + 1.01 * t));
  check_fit(xs, [&](double x) { return cdf(right, x); }, [&](double x) { return cdf(wide, x); });
}

TEST_CASE("triangular: symmetric triangle on the tolerance", "[slow][distribution]") {
  const double t = 0.02;
  const auto xs = sorted_draws(law(Distribution::triangular, t), n_large, 103);
  // source: Boost.Math triangular distribution
  const boost::math::triangular_distribution<double> right(nominal_ohms * (1 - t), nominal_ohms, nominal_ohms * (1 + t));
  const boost::math::triangular_distribution<double> wide(nominal_ohms * (1 - 1.01 * t), nominal_ohms, nominal_ohms * (1 + 1.01 * t));
  check_fit(xs, [&](double x) { return cdf(right, x); }, [&](double x) { return cdf(wide, x); });
}

TEST_CASE("truncated normal: sigma = t / k, cut at the tolerance", "[slow][distribution]") {
  // Tolerance at 1.5 sigma: the cut removes 13 % of the parent law, so it matters.
  const double t = 0.01, k = 1.5, sigma = t / k;
  const auto xs = sorted_draws(law(Distribution::truncated_normal, t, k), n_large, 104);
  CHECK(relative(xs.front()) >= -t * (1 + 1e-12));
  CHECK(relative(xs.back()) <= t * (1 + 1e-12));
  const auto right = truncated_cdf(sigma, t), wide = truncated_cdf(1.01 * sigma, t);
  check_fit(xs, [&](double x) { return right(relative(x)); },
            [&](double x) { return wide(relative(x)); });
  // The cut matters: the parent normal law does not fit.
  const boost::math::normal_distribution<double> parent(nominal_ohms, nominal_ohms * sigma);
  CHECK(ks_sorted(xs, [&](double x) { return cdf(parent, x); }) > ks_critical_1pct(xs.size()));
}

TEST_CASE("log-normal: median at nominal, ln(1 + t) at k sigma", "[slow][distribution]") {
  const double t = 0.2, k = 3.0, s = std::log1p(t) / k;
  const auto xs = sorted_draws(law(Distribution::log_normal, t, k), n_large, 105);
  // source: Boost.Math lognormal distribution, location ln(nominal), scale s
  const boost::math::lognormal_distribution<double> right(std::log(nominal_ohms), s), wide(std::log(nominal_ohms), 1.01 * s);
  check_fit(xs, [&](double x) { return cdf(right, x); }, [&](double x) { return cdf(wide, x); });
}

TEST_CASE("binned: a 5 % class with the 1 % parts sorted out", "[slow][distribution]") {
  const double t = 0.05, inner = 0.01, k = 3.0, sigma = t / k;
  const auto xs = sorted_draws(law(Distribution::binned, t, k, inner), n_large, 106);
  // No part is left in the band the tighter class took, none beyond the outer class.
  const auto inside = std::count_if(xs.begin(), xs.end(),
                                    [&](double x) { return std::abs(relative(x)) < inner * (1 - 1e-9); });
  CHECK(inside == 0);
  CHECK(relative(xs.front()) >= -t * (1 + 1e-12));
  CHECK(relative(xs.back()) <= t * (1 + 1e-12));
  const auto right = binned_cdf(sigma, t, inner), wide = binned_cdf(1.01 * sigma, t, inner);
  check_fit(xs, [&](double x) { return right(relative(x)); },
            [&](double x) { return wide(relative(x)); });
}

TEST_CASE("fixed: no spread at all", "[fast][distribution]") {
  Variation v({"RX"}, Distribution::fixed);
  const auto xs = sorted_draws(v, 1000, 107);
  CHECK(xs.front() == nominal_ohms);
  CHECK(xs.back() == nominal_ohms);
  const detail::VariationModel model(resistor_probes({"RX"}, nominal_ohms), {v}, {}, {});
  CHECK(model.dimension() == 0);
}

TEST_CASE("every sampler draws the same law", "[slow][distribution]") {
  // The binned law, the most involved map, through quasi-random and stratified points:
  // their points are more even than independent ones, so the statistic only shrinks.
  const double t = 0.05, inner = 0.01, sigma = t / 3.0;
  for (Sampler sampler : {Sampler::monte_carlo, Sampler::sobol, Sampler::latin_hypercube}) {
    CAPTURE(to_string(sampler));
    const auto xs = sorted_draws(law(Distribution::binned, t, 3.0, inner), 1 << 16, 108, sampler);
    const auto right = binned_cdf(sigma, t, inner);
    CHECK(ks_sorted(xs, [&](double x) { return right(relative(x)); }) < ks_critical_1pct(xs.size()));
  }
}

TEST_CASE("the fast normal quantile agrees with Boost.Math to rounding", "[fast][distribution]") {
  // source: Boost.Math normal quantile (erfc_inv, evaluated in long double)
  const boost::math::normal_distribution<double> unit;
  double worst = 0.0;
  auto check = [&](double p) {
    const double expected = boost::math::quantile(unit, p);
    const double got = detail::normal_quantile(p);
    const double error = std::abs(got - expected) / std::max(std::abs(expected), 1e-3);
    worst = std::max(worst, error);
    if (!(error < 4e-15)) FAIL("p = " << p << ": " << got << " against " << expected);
  };
  for (int i = 1; i < 20000; ++i) check(i / 20000.0);             // the central region and its edges
  for (double p = 1e-300; p < 0.1; p *= 1.37) {                    // both tails
    check(p);
    if (1.0 - p < 1.0) check(1.0 - p);
  }
  for (double q : {0.075, 0.0749999999, 0.0750000001}) check(0.5 - 0.425 + q - 0.075);  // branch edge
  CAPTURE(worst);
  CHECK(worst < 4e-15);
  CHECK(detail::normal_quantile(0.5) == 0.0);
  CHECK(std::isinf(detail::normal_quantile(0.0)));
}
