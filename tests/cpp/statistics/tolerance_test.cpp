// The adaptive Monte Carlo procedure of JCGM 101:2008, 7.9: stop when the mean, the
// standard uncertainty and the coverage interval ends are stable to the numerical
// tolerance of the standard uncertainty.
#include <cmath>

#include "statistics/additive_model.hpp"
#include "study/run_merger.hpp"

using namespace lotwise;
using namespace lotwise::testing;

TEST_CASE("numerical tolerance of a standard uncertainty", "[tolerance]") {
  // JCGM 101:2008, 7.9.2, example 1: u(y) = 1 as 1 x 10^0 with one significant digit
  // gives delta = 0.5; example 2: u(y) = 0.0023 with two digits, 23 x 10^-4, delta = 0.00005.
  CHECK_THAT(detail::numerical_tolerance(1.0, 1), close_rel(0.5, 1e-12));
  CHECK_THAT(detail::numerical_tolerance(0.0023, 2), close_rel(0.00005, 1e-12));
  CHECK_THAT(detail::numerical_tolerance(2.0, 2), close_rel(0.05, 1e-12));
  CHECK(std::isnan(detail::numerical_tolerance(0.0, 2)));
}

TEST_CASE("JCGM 101 adaptive procedure on the additive model", "[tolerance][slow]") {
  const Study study = additive_model(Distribution::normal);
  RunOptions o;
  o.samples = 5000000;  // cap
  o.seed = 2008;
  o.chunk_size = 1000;
  o.threads = 2;
  o.tolerance_digits = 2;
  const YieldResult r = study.run(o);
  // Batches of M = max(100 / (1 - 0.95), 10^4) = 10^4 trials (7.9.4 b); here 10 chunks.
  REQUIRE(r.target_met);
  CHECK(r.tolerance_batches >= 2);
  CHECK(r.samples == r.tolerance_batches * 10000);
  CHECK(r.samples < o.samples);
  const MeasurementSummary& y = r.measurements.at(0);
  // u(y) = 2.0 stated with two digits: delta = 0.05 (7.9.2).
  CHECK_THAT(y.numerical_tolerance, close_rel(0.05, 1e-12));
  // source: JCGM 101:2008, 9.2.2, Table 2: y = 0.00, u(y) = 2.00, 95 % coverage interval
  // [-3.92, 3.92]. The adaptive result must agree to within the tolerance it reached (a
  // margin of 2 delta for the sampling error left at stopping, per 7.9.4 j).
  CHECK_THAT(y.stats.mean(), close_abs(0.0, 2 * 0.05));
  CHECK_THAT(y.stats.std_dev(), close_abs(2.0, 2 * 0.05));
  CHECK_THAT(y.coverage.low, close_abs(-3.92, 2 * 0.05));
  CHECK_THAT(y.coverage.high, close_abs(3.92, 2 * 0.05));
}

TEST_CASE("tolerance digits need one replicate and histograms", "[tolerance][errors]") {
  const Study study = additive_model(Distribution::normal);
  RunOptions o;
  o.samples = 1000;
  o.tolerance_digits = 4;
  CHECK_THROWS_WITH(study.run(o), Catch::Contains("tolerance digits must be 0 (off), 1, 2 or 3"));
  o.tolerance_digits = 2;
  o.histogram_bins = 0;
  CHECK_THROWS_WITH(study.run(o), Catch::Contains("need the histograms"));
  o.histogram_bins = 4096;
  o.sampler = Sampler::sobol;
  CHECK_THROWS_WITH(study.run(o), Catch::Contains("needs a single replicate"));
}
