// Sampled parameter values against their stated laws: mean, standard deviation and a
// Kolmogorov-Smirnov test, read through a measurement that is linear in the parameter.
#include <algorithm>
#include <cmath>
#include <functional>
#include <vector>

#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/normal.hpp>

#include "engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;
using Kind = MeasurementKind;

namespace {

// Limiting Kolmogorov distribution, K(x) = 1 - 2 sum_k (-1)^(k-1) exp(-2 k^2 x^2).
// source: Kolmogorov (1933) limiting distribution of sqrt(n) D_n (from memory)
double kolmogorov_cdf(double x) {
  double sum = 0.0;
  for (int k = 1; k <= 100; ++k) {
    sum += ((k % 2) ? 1.0 : -1.0) * std::exp(-2.0 * k * k * x * x);
  }
  return 1.0 - 2.0 * sum;
}

// The 1 % critical value of D_n for a fully specified law, using Stephens' finite-n
// modification D (sqrt(n) + 0.12 + 0.11/sqrt(n)) ~ K.
// source: M. A. Stephens, J. R. Statist. Soc. B 32(1), 1970 (from memory)
double ks_critical_1pct(std::size_t n) {
  double lo = 1.0, hi = 3.0;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    (kolmogorov_cdf(mid) < 0.99 ? lo : hi) = mid;
  }
  const double rn = std::sqrt(static_cast<double>(n));
  return lo / (rn + 0.12 + 0.11 / rn);
}

double ks_statistic(std::vector<double> xs, const std::function<double(double)>& cdf) {
  std::sort(xs.begin(), xs.end());
  const double n = static_cast<double>(xs.size());
  double d = 0.0;
  for (std::size_t i = 0; i < xs.size(); ++i) {
    const double f = cdf(xs[i]);
    d = std::max({d, (static_cast<double>(i) + 1.0) / n - f, f - static_cast<double>(i) / n});
  }
  return d;
}

// Kept values of the study's only measurement.
std::vector<double> sampled(const Study& study, std::uint64_t n, std::uint64_t seed) {
  RunOptions o;
  o.samples = n;
  o.seed = seed;
  o.threads = 2;
  o.keep_samples = true;
  const YieldResult r = study.run(o);
  REQUIRE(r.samples == n);
  REQUIRE(r.values.size() == n);
  REQUIRE(r.measurements.size() == 1);
  // The run's own moments agree with the kept values.
  RunningStats own;
  for (double v : r.values) own.add(v);
  CHECK(r.measurements[0].stats.count() == n);
  CHECK_THAT(r.measurements[0].stats.mean(), close_rel(own.mean(), 1e-12));
  CHECK_THAT(r.measurements[0].stats.std_dev(), close_rel(own.std_dev(), 1e-9));
  return r.values;
}

// Mean within 4 standard errors, and (n-1) s^2 / sigma^2 within the central 99.9 % of
// chi-square with n-1 degrees of freedom (exact for a normal law; conservative for a
// uniform one, whose sample variance spreads less).
void check_moments(const std::vector<double>& xs, double mean, double sigma) {
  RunningStats s;
  for (double x : xs) s.add(x);
  const double n = static_cast<double>(xs.size());
  // source: common practice (central limit theorem; 4 standard errors)
  CHECK(std::abs(s.mean() - mean) <= 4.0 * sigma / std::sqrt(n));
  // source: chi-square law of the sample variance of a normal sample (Boost.Math quantiles)
  const boost::math::chi_squared_distribution<double> chi2(n - 1.0);
  const double stat = (n - 1.0) * s.std_dev() * s.std_dev() / (sigma * sigma);
  CHECK(stat >= boost::math::quantile(chi2, 0.0005));
  CHECK(stat <= boost::math::quantile(chi2, 0.9995));
}

// A 1 A current source into RX: V(n) = RX, volt for ohm.
Circuit resistor_probe(double ohms) {
  Circuit c;
  c.add_current_source("I1", "gnd", "n", 1.0);
  c.add_resistor("RX", "n", "gnd", ohms);
  return c;
}

}  // namespace

TEST_CASE("Kolmogorov critical value", "[fast][sampling]") {
  // source: tabulated asymptotic 1 % critical value 1.63/sqrt(n) (from memory)
  CHECK_THAT(ks_critical_1pct(1000000) * 1000.0, close_abs(1.6276, 5e-4));
}

TEST_CASE("normal resistor tolerance: sigma = nominal t / k", "[slow][sampling]") {
  const double nominal_ohms = 1000.0, t = 0.01, k = 3.0;
  Variation v;
  v.targets = {"RX"};
  v.distribution = Distribution::normal;
  v.tolerance = t;
  v.sigmas = k;
  const Study s = make_study(resistor_probe(nominal_ohms),
                             {measure("v", Kind::node_voltage, {}, {"n"})}, {v});
  const std::vector<double> xs = sampled(s, 20000, 11);
  const double sigma = nominal_ohms * t / k;  // source: common practice (t at k sigma)
  check_moments(xs, nominal_ohms, sigma);
  const boost::math::normal_distribution<double> law(nominal_ohms, sigma);
  const double d = ks_statistic(xs, [&](double x) { return boost::math::cdf(law, x); });
  CHECK(d < ks_critical_1pct(xs.size()));
  // The test has power: a uniform law of the same spread is rejected.
  const double half = sigma * std::sqrt(3.0);
  const double d_wrong = ks_statistic(xs, [&](double x) {
    return std::clamp((x - (nominal_ohms - half)) / (2.0 * half), 0.0, 1.0);
  });
  CHECK(d_wrong > ks_critical_1pct(xs.size()));
}

TEST_CASE("uniform resistor tolerance: sigma = nominal t / sqrt(3)", "[slow][sampling]") {
  const double nominal_ohms = 4.7e3, t = 0.05;
  Variation v;
  v.targets = {"RX"};
  v.distribution = Distribution::uniform;
  v.tolerance = t;
  const Study s = make_study(resistor_probe(nominal_ohms),
                             {measure("v", Kind::node_voltage, {}, {"n"})}, {v});
  const std::vector<double> xs = sampled(s, 20000, 12);
  // source: common practice (rectangular law of half-width a has sigma a/sqrt(3))
  check_moments(xs, nominal_ohms, nominal_ohms * t / std::sqrt(3.0));
  const double lo = nominal_ohms * (1.0 - t), hi = nominal_ohms * (1.0 + t);
  CHECK(*std::min_element(xs.begin(), xs.end()) >= lo);
  CHECK(*std::max_element(xs.begin(), xs.end()) <= hi);
  const double d = ks_statistic(xs, [&](double x) { return std::clamp((x - lo) / (hi - lo), 0.0, 1.0); });
  CHECK(d < ks_critical_1pct(xs.size()));
  // The test has power: a normal law of the same spread is rejected.
  const boost::math::normal_distribution<double> wrong(nominal_ohms, nominal_ohms * t / std::sqrt(3.0));
  CHECK(ks_statistic(xs, [&](double x) { return boost::math::cdf(wrong, x); }) >
        ks_critical_1pct(xs.size()));
}

TEST_CASE("absolute tolerance on an op-amp offset", "[slow][sampling]") {
  // A voltage follower with its + input grounded: the output is the offset voltage.
  Circuit c;
  c.add_opamp("U1", "gnd", "out", "out", OpAmpSpec{});
  c.add_resistor("RL", "out", "gnd", 10e3);
  Variation v;
  v.targets = {"U1.offset"};
  v.relative = false;
  v.tolerance = parse_value("100u");  // volts, at 3 sigma
  v.sigmas = 3.0;
  const Study s = make_study(c, {measure("vo", Kind::node_voltage, {}, {"out"})}, {v});
  REQUIRE(s.varied_parameters() == std::vector<std::string>{"U1.offset"});
  const std::vector<double> xs = sampled(s, 20000, 13);
  const double sigma = 100e-6 / 3.0;  // source: common practice (t at k sigma)
  check_moments(xs, 0.0, sigma);
  const boost::math::normal_distribution<double> law(0.0, sigma);
  CHECK(ks_statistic(xs, [&](double x) { return boost::math::cdf(law, x); }) <
        ks_critical_1pct(xs.size()));
}
