// Structure between parameters: matched networks, lots, and correlation through a
// Gaussian copula, each recovered within its sampling error.
#include <cmath>
#include <vector>

#include <boost/math/distributions/chi_squared.hpp>

#include "variation_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

// s / sigma within the central 99.9 % of its law: (n-1) s^2 / sigma^2 ~ chi-square(n-1).
// source: chi-square law of the sample variance of a normal sample (Boost.Math quantiles)
void check_sd(const std::vector<double>& xs, double sigma) {
  const double n = static_cast<double>(xs.size());
  const boost::math::chi_squared_distribution<double> chi2(n - 1.0);
  const double s = sd_of(xs);
  const double stat = (n - 1.0) * s * s / (sigma * sigma);
  CAPTURE(s, sigma);
  CHECK(stat >= boost::math::quantile(chi2, 0.0005));
  CHECK(stat <= boost::math::quantile(chi2, 0.9995));
}

// A sample correlation within 4 of its standard errors, (1 - rho^2) / sqrt(n) for a
// bivariate normal sample (source: Fisher's large-sample variance of r, from memory).
void check_correlation(const std::vector<double>& a, const std::vector<double>& b, double rho) {
  const double r = correlation_of(a, b);
  CAPTURE(r, rho);
  CHECK(std::abs(r - rho) <= 4.0 * (1.0 - rho * rho) / std::sqrt(static_cast<double>(a.size())));
}

std::vector<double> relative(const std::vector<double>& xs, double nominal) {
  std::vector<double> out;
  for (double x : xs) out.push_back(x / nominal - 1.0);
  return out;
}

}  // namespace

TEST_CASE("matched pair: ratio and absolute spreads both as specified", "[slow][structure]") {
  // A network of 10 k resistors, 0.1 % absolute and 0.01 % ratio tolerance, both at 3 sigma.
  const double t = 0.001, ratio = 0.0001, k = 3.0;
  Variation network({"RN*"}, Distribution::normal, t, true, k);
  network.ratio_tolerance = ratio;
  const Circuit c = resistor_probes({"RN1", "RN2", "RN3"}, 10e3);
  const auto d = draw(c, {network}, {"RN1", "RN2", "RN3"}, 1 << 18, 201);
  std::vector<double> ratio12, ratio23;
  for (std::size_t i = 0; i < d.columns[0].size(); ++i) {
    ratio12.push_back(d.columns[0][i] / d.columns[1][i] - 1.0);
    ratio23.push_back(d.columns[1][i] / d.columns[2][i] - 1.0);
  }
  // source: the stated tolerances (ratio of two members at k sigma; each member's value)
  check_sd(ratio12, ratio / k);
  check_sd(ratio23, ratio / k);
  for (const auto& column : d.columns) check_sd(relative(column, 10e3), t / k);
  // Members share most of their deviation: 1 - (ratio^2 / 2) / t^2.
  check_correlation(d.columns[0], d.columns[2], 1.0 - 0.5 * (ratio / t) * (ratio / t));

  SECTION("discrete parts of the same tolerance have a ratio spread sqrt(2) t / k") {
    const auto e = draw(c, {Variation({"RN*"}, Distribution::normal, t, true, k)}, {"RN1", "RN2"},
                        1 << 16, 202);
    std::vector<double> r;
    for (std::size_t i = 0; i < e.columns[0].size(); ++i) r.push_back(e.columns[0][i] / e.columns[1][i] - 1.0);
    // source: variance of a difference of independent deviations (1st order in t)
    check_sd(r, std::sqrt(2.0) * t / k);
  }
}

TEST_CASE("a matched network needs a tolerance it can split", "[fast][structure]") {
  Variation network({"RN*"}, Distribution::normal, 0.001);
  network.ratio_tolerance = 0.0015;  // above sqrt(2) * 0.1 %
  const Circuit c = resistor_probes({"RN1", "RN2"}, 10e3);
  CHECK_THROWS_WITH(detail::VariationModel(c, {network}, {}, {}), Catch::Contains("sqrt(2)"));
  network.ratio_tolerance = 0.0001;
  network.distribution = Distribution::uniform;
  CHECK_THROWS_WITH(detail::VariationModel(c, {network}, {}, {}), Catch::Contains("normal distribution"));
  network.distribution = Distribution::normal;
  network.targets = {"RN1"};
  CHECK_THROWS_WITH(detail::VariationModel(c, {network}, {}, {}), Catch::Contains("at least two parts"));
}

TEST_CASE("lot-to-lot plus part-to-part: shared within a build", "[slow][structure]") {
  // Lot deviation 1 %, own deviation 0.5 %, both normal at 3 sigma.
  Variation v({"R*"}, Distribution::normal, 0.005, true, 3.0);
  v.lot_tolerance = 0.01;
  const Circuit c = resistor_probes({"R1", "R2"}, 4.7e3);
  const auto d = draw(c, {v}, {"R1", "R2"}, 1 << 16, 203);
  const double lot = 0.01 / 3.0, own = 0.005 / 3.0;
  // source: variances of independent components add; shared share = lot^2 / total^2
  check_sd(relative(d.columns[0], 4.7e3), std::hypot(lot, own));
  check_correlation(d.columns[0], d.columns[1], lot * lot / (lot * lot + own * own));

  SECTION("a uniform lot") {
    Variation u = v;
    u.lot_distribution = Distribution::uniform;
    const auto e = draw(c, {u}, {"R1", "R2"}, 1 << 16, 204);
    // source: rectangular law of half-width a has variance a^2 / 3 (common practice).
    // The sum of a uniform and a normal is not normal: allow 2 % on the spread instead.
    const double expected = std::hypot(0.01 / std::sqrt(3.0), own);
    CHECK(std::abs(sd_of(relative(e.columns[0], 4.7e3)) / expected - 1.0) < 0.02);
  }
}

TEST_CASE("correlation: a Gaussian copula recovers its matrix", "[slow][structure]") {
  Circuit c;
  c.add_resistor("RL", "out", "gnd", 1e3);
  c.add_opamp("U1", "gnd", "out", "out", OpAmpSpec{});
  c.add_resistor("RL2", "out2", "gnd", 1e3);
  c.add_opamp("U2", "gnd", "out2", "out2", OpAmpSpec{});
  c.add_resistor("RL3", "out3", "gnd", 1e3);
  c.add_opamp("U3", "gnd", "out3", "out3", OpAmpSpec{});
  Variation offsets({"U*.offset"}, Distribution::normal, 3e-3, false, 3.0);
  std::vector<Correlation> rho = {{{"U1.offset", "U2.offset"}, 0.6},
                                  {{"U1.offset", "U3.offset"}, -0.3},
                                  {{"U2.offset", "U3.offset"}, 0.2}};
  const auto d = draw(c, {offsets}, {"U1.offset", "U2.offset", "U3.offset"}, 1 << 16, 205,
                      Sampler::monte_carlo, rho);
  check_correlation(d.columns[0], d.columns[1], 0.6);
  check_correlation(d.columns[0], d.columns[2], -0.3);
  check_correlation(d.columns[1], d.columns[2], 0.2);
  // The marginals stay as stated.
  for (const auto& column : d.columns) check_sd(column, 1e-3);

  SECTION("uniform marginals: the copula sets the rank correlation") {
    Variation u({"U*.offset"}, Distribution::uniform, 1e-3, false);
    const auto e = draw(c, {u}, {"U1.offset", "U2.offset"}, 1 << 16, 206, Sampler::monte_carlo,
                        {{{"U1.offset", "U2.offset"}, 0.7}});
    // For uniform marginals the value correlation is the Spearman correlation of the
    // Gaussian copula, (6 / pi) asin(rho / 2).
    // source: K. Pearson (1907) / W. Kruskal, JASA 53, 1958 (from memory)
    const double expected = 6.0 / std::acos(-1.0) * std::asin(0.35);
    CHECK(std::abs(correlation_of(e.columns[0], e.columns[1]) - expected) < 4.0 / 256.0);
    CHECK(*std::max_element(e.columns[0].begin(), e.columns[0].end()) <= 1e-3);
  }
  SECTION("every sampler keeps the correlation") {
    for (Sampler sampler : {Sampler::sobol, Sampler::latin_hypercube}) {
      CAPTURE(to_string(sampler));
      const auto e = draw(c, {offsets}, {"U1.offset", "U2.offset", "U3.offset"}, 1 << 14, 207,
                          sampler, rho);
      CHECK(std::abs(correlation_of(e.columns[0], e.columns[1]) - 0.6) < 4.0 * 0.64 / 128.0);
      CHECK(std::abs(correlation_of(e.columns[0], e.columns[2]) + 0.3) < 4.0 * 0.91 / 128.0);
    }
  }
}

TEST_CASE("a correlation matrix that is not positive definite names the pair", "[fast][structure]") {
  // R1..R3 are nearly one part (0.9 each); R4 follows R1 and R2 closely but is given a
  // strong negative correlation with R3: only that coefficient can be mended alone.
  const Circuit c = resistor_probes({"R1", "R2", "R3", "R4"}, 1e3);
  const Variation v({"R*"}, Distribution::normal, 0.01);
  const std::vector<Correlation> rho = {{{"R1", "R2", "R3"}, 0.9},
                                        {{"R4", "R1"}, 0.8},
                                        {{"R4", "R2"}, 0.8},
                                        {{"R4", "R3"}, -0.8}};
  CHECK_THROWS_WITH(detail::VariationModel(c, {v}, rho, {}),
                    Catch::Contains("not positive definite") &&
                        Catch::Contains("between 'R3' and 'R4'") &&
                        Catch::Contains("R1, R2, R3, R4"));
  // Consistent coefficients are accepted.
  CHECK_NOTHROW(detail::VariationModel(c, {v}, {{{"R1", "R2", "R3", "R4"}, 0.9}}, {}));
}

TEST_CASE("correlation errors name what is wrong", "[fast][structure]") {
  const Circuit c = resistor_probes({"R1", "R2"}, 1e3);
  const Variation v({"R1"}, Distribution::normal, 0.01);
  CHECK_THROWS_WITH(detail::VariationModel(c, {v}, {{{"R1", "R2"}, 0.5}}, {}),
                    Catch::Contains("'R2' has no part-to-part spread"));
  const Variation both({"R*"}, Distribution::normal, 0.01);
  CHECK_THROWS_WITH(detail::VariationModel(c, {both}, {{{"R1", "R2"}, 1.0}}, {}),
                    Catch::Contains("strictly between -1 and 1"));
  CHECK_THROWS_WITH(detail::VariationModel(c, {both}, {{{"R1", "R2"}, 0.5}, {{"R2", "R1"}, 0.4}}, {}),
                    Catch::Contains("'R1' and 'R2' are given the coefficient 0.5"));
  CHECK_THROWS_WITH(detail::VariationModel(c, {both}, {{{"R1"}, 0.5}}, {}),
                    Catch::Contains("at least two parameters"));
}
