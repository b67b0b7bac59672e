// Standardized regression coefficients and rank correlations from the sampled builds,
// against closed forms for a linear measurement of correlated normal inputs.
#include <cmath>

#include "engine/engine_support.hpp"
#include "stats/regression.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

// y = X1 + X2 + X3 (three sources in series); X1 and X2 correlated with coefficient rho,
// X3 independent with half their spread.
Study correlated_sum(double rho) {
  Circuit c;
  c.add_voltage_source("X1", "n1", "gnd", 0.0);
  c.add_voltage_source("X2", "n2", "n1", 0.0);
  c.add_voltage_source("X3", "n3", "n2", 0.0);
  c.add_resistor("RL", "n3", "gnd", 1e3);
  Variation v;
  v.targets = {"X1", "X2"};
  v.relative = false;
  v.tolerance = 3.0;  // sigma 1 V
  v.sigmas = 3.0;
  Variation w = v;
  w.targets = {"X3"};
  w.tolerance = 1.5;  // sigma 0.5 V
  Design d;
  d.title = "correlated sum";
  d.circuit = c;
  d.measurements = {measure("y", MeasurementKind::node_voltage, {}, {"n3"})};
  d.variations = {v, w};
  d.correlations = {Correlation{{"X1", "X2"}, rho}};
  return Study(std::move(d));
}

}  // namespace

TEST_CASE("standardized regression coefficients with correlated inputs", "[regression]") {
  const double rho = 0.8;
  const Study study = correlated_sum(rho);
  RunOptions o;
  o.samples = 20000;
  o.seed = 11;
  o.regression_samples = 20000;
  const YieldResult r = study.run(o);
  REQUIRE(r.attribution_parameters == std::vector<std::string>{"X1", "X2", "X3"});
  REQUIRE(r.regression_rows == 20000);
  // Closed form (linear model, textbook regression algebra): var y = 1 + 1 + 2 rho +
  // 0.25; SRC_j = b_j s_j / s_y with b = 1, so 1 / s_y for X1, X2 and 0.5 / s_y for X3.
  // The fit is exact (R^2 = 1) because y is linear in the sources; the coefficients carry
  // the sampling error of the ratio of sample standard deviations s_j / s_y, about
  // 1 / sqrt(n) relative (0.7 % at n = 20000): margin 0.01.
  const double sy = std::sqrt(2.0 + 2.0 * rho + 0.25);
  CHECK_THAT(r.standardized_regression[0], close_abs(1.0 / sy, 0.01));
  CHECK_THAT(r.standardized_regression[1], close_abs(1.0 / sy, 0.01));
  CHECK_THAT(r.standardized_regression[2], close_abs(0.5 / sy, 0.01));
  // Against the plain correlations, which would give (1 + rho) / s_y = 0.92 for X1.
  CHECK(r.standardized_regression[0] < 0.6);
  CHECK_THAT(r.regression_r_squared[0], close_abs(1.0, 1e-12));
  // The plain correlation of X1 with y is (1 + rho) / s_y: it counts X2's share too.
  // Sampling error of a correlation near 0.9 with n = 20000: about (1 - r^2)/sqrt(n) = 0.0013.
  const double r1 = (1.0 + rho) / sy;
  CHECK_THAT(r.correlations[0], close_abs(r1, 0.006));
  // Spearman's rho of a bivariate normal pair with correlation r is (6 / pi) asin(r / 2)
  // (Pearson 1907; Kruskal, J. Amer. Statist. Assoc. 53, 1958, eq. 5.2).
  const double pi = std::acos(-1.0);
  CHECK_THAT(r.rank_correlations[0], close_abs(6.0 / pi * std::asin(r1 / 2.0), 0.008));
  CHECK_THAT(r.rank_correlations[2], close_abs(6.0 / pi * std::asin(0.5 / sy / 2.0), 0.015));
}

TEST_CASE("average ranks share ties", "[regression]") {
  // Spearman's definition: tied values take the mean of the ranks they span (common practice).
  const std::vector<double> ranks = detail::average_ranks({3.0, 1.0, 3.0, 2.0, 3.0});
  CHECK(ranks == std::vector<double>{4.0, 1.0, 4.0, 2.0, 4.0});
}

TEST_CASE("a monotone non-linear measurement: rank correlation 1, R^2 below 1", "[regression]") {
  // Rows (x, y = exp(3 x)): Spearman's rho of a strictly increasing map is exactly 1.
  std::vector<double> rows;
  for (int i = 0; i < 200; ++i) {
    const double x = -1.0 + 0.01 * i;
    rows.push_back(x);
    rows.push_back(std::exp(3.0 * x));
  }
  const detail::RegressionSummary g = detail::regress(rows.data(), 200, 2, 1, 1);
  CHECK_THAT(g.rank_correlation[0], close_abs(1.0, 1e-12));
  CHECK(g.r_squared < 0.9);
  CHECK(g.rows == 200);
}

TEST_CASE("regression figures are NaN without enough rows or spread", "[regression]") {
  const std::vector<double> rows{1.0, 2.0, 1.0, 2.0, 1.0, 2.0};
  const detail::RegressionSummary g = detail::regress(rows.data(), 3, 2, 1, 1);
  CHECK(std::isnan(g.standardized[0]));
  CHECK(std::isnan(g.r_squared));
}

TEST_CASE("regression of several measurements at once equals one at a time", "[regression]") {
  // Rows (x1, x2, y1, y2, y3): y1 linear, y2 with a NaN row (fitted alone), y3 constant.
  std::vector<double> rows;
  for (int i = 0; i < 300; ++i) {
    const double x1 = std::sin(0.37 * i), x2 = std::cos(0.11 * i * i);
    rows.insert(rows.end(), {x1, x2, 2.0 * x1 - x2 + 0.1 * std::sin(3.1 * i),
                             i == 17 ? std::nan("") : x1 * x1 + x2, 4.0});
  }
  const auto all = detail::regress_all(rows.data(), 300, 5, 2, 3);
  REQUIRE(all.size() == 3);
  for (std::size_t k = 0; k < 3; ++k) {
    const detail::RegressionSummary one = detail::regress(rows.data(), 300, 5, 2, 2 + k);
    CHECK(all[k].rows == one.rows);
    for (std::size_t j = 0; j < 2; ++j) {
      if (std::isnan(one.standardized[j])) {
        CHECK(std::isnan(all[k].standardized[j]));
      } else {
        CHECK_THAT(all[k].standardized[j], close_abs(one.standardized[j], 1e-12));
        CHECK_THAT(all[k].rank_correlation[j], close_abs(one.rank_correlation[j], 1e-12));
      }
    }
  }
  CHECK(all[1].rows == 299);
  CHECK(std::isnan(all[2].r_squared));
}
