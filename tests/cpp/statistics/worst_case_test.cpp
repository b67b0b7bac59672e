// Sensitivities, extreme-value analysis, root-sum-square and corners.
#include <cmath>

#include "engine/engine_support.hpp"

using namespace lotwise;
using namespace lotwise::testing;

namespace {

// y = X1 + 2 X2 - 3 X3 + X4 through a resistive summer (a summing inverting amplifier
// with an ideal op-amp and a second inverting stage), normal sources.
Design linear_design() {
  Circuit c;
  c.add_voltage_source("X1", "a1", "gnd", 1.0);
  c.add_voltage_source("X2", "a2", "gnd", 0.5);
  c.add_voltage_source("X3", "a3", "gnd", -0.2);
  c.add_voltage_source("X4", "a4", "gnd", 0.3);
  // First stage: s = -(X1 + 2 X2 + X4); X3 into the second stage.
  c.add_resistor("R1", "a1", "m1", 10e3);
  c.add_resistor("R2", "a2", "m1", 5e3);
  c.add_resistor("R4", "a4", "m1", 10e3);
  c.add_resistor("RF1", "m1", "s", 10e3);
  c.add_opamp("U1", "gnd", "m1", "s", OpAmpSpec{});
  // Second stage: y = -(s + 3 X3) = X1 + 2 X2 - 3 X3 + X4.
  c.add_resistor("RS", "s", "m2", 10e3);
  c.add_resistor("R3", "a3", "m2", 10e3 / 3.0);
  c.add_resistor("RF2", "m2", "y", 10e3);
  c.add_opamp("U2", "gnd", "m2", "y", OpAmpSpec{});
  Design d;
  d.circuit = c;
  Measurement m;
  m.name = "y";
  m.kind = MeasurementKind::node_voltage;
  m.output = {"y"};
  d.measurements = {m};
  // Absolute normal spreads, 3 sigma: sd 0.01, 0.02, 0.03, 0.04 V.
  const double sds[] = {0.01, 0.02, 0.03, 0.04};
  const char* names[] = {"X1", "X2", "X3", "X4"};
  for (int i = 0; i < 4; ++i) {
    Variation v;
    v.targets = {names[i]};
    v.relative = false;
    v.tolerance = 3.0 * sds[i];
    v.sigmas = 3.0;
    d.variations.push_back(v);
  }
  return d;
}

}  // namespace

TEST_CASE("linear measurement: RSS is the exact sd, EVA the corner extreme", "[worst_case]") {
  const Study study(linear_design());
  const WorstCaseResult w = worst_case(study);
  REQUIRE(w.parameters.size() == 4);
  REQUIRE(w.exhaustive);
  CHECK(w.corners == 16);
  const MeasurementWorstCase& y = w.measurements.at(0);
  // Nominal 1 + 1 + 0.6 + 0.3 (closed form of the summer).
  CHECK_THAT(y.nominal, close_rel(2.9, 1e-12));
  const double gains[] = {1.0, 2.0, -3.0, 1.0};
  const double sds[] = {0.01, 0.02, 0.03, 0.04};
  double variance = 0.0, extreme = 0.0;
  for (int i = 0; i < 4; ++i) {
    CHECK_THAT(y.sensitivities[static_cast<std::size_t>(i)], close_rel(gains[i], 1e-8));
    variance += gains[i] * gains[i] * sds[i] * sds[i];
    extreme += std::fabs(gains[i]) * 3.0 * sds[i];
  }
  // Exact for a linear function of independent normals (common practice): sd^2 = sum a^2 s^2.
  CHECK_THAT(y.rss_std_dev, close_rel(std::sqrt(variance), 1e-8));
  CHECK_THAT(y.rss_half_width, close_rel(3.0 * std::sqrt(variance), 1e-8));
  // EVA: the vertex evaluated, equal to the first-order figure and to the largest and
  // smallest of all 16 corners.
  CHECK_THAT(y.high, close_rel(2.9 + extreme, 1e-12));
  CHECK_THAT(y.low, close_rel(2.9 - extreme, 1e-12));
  CHECK_THAT(y.linear_high, close_rel(y.high, 1e-8));
  CHECK_THAT(y.linear_low, close_rel(y.low, 1e-8));
  CHECK(y.corner_high == y.high);
  CHECK(y.corner_low == y.low);
  double shares = 0.0;
  for (double s : y.variance_shares) shares += s;
  CHECK_THAT(shares, close_rel(1.0, 1e-12));
  CHECK_THAT(y.variance_shares[2], close_rel(0.0081 / variance, 1e-8));

  // The Monte Carlo standard deviation agrees within its sampling error: the sd of a
  // sample sd from n normal draws is sigma / sqrt(2 (n - 1)) (common practice).
  RunOptions o;
  o.samples = 20000;
  o.threads = 2;
  const YieldResult r = study.run(o);
  const double sigma = std::sqrt(variance);
  CHECK_THAT(r.measurements[0].stats.std_dev(), close_abs(sigma, 4.0 * sigma / std::sqrt(2.0 * 19999.0)));
  CHECK_THAT(r.measurements[0].stats.mean(), close_abs(2.9, 4.0 * sigma / std::sqrt(20000.0)));

  // Global sensitivity from the samples: for independent inputs of a linear function the
  // correlation of X_i with y is a_i s_i / sd(y) (the standardized regression coefficient,
  // common practice); its sampling error is about (1 - rho^2)/sqrt(n) <= 0.007 here.
  REQUIRE(r.attribution_parameters.size() == 4);
  double explained = 0.0;
  const char* names[] = {"X1", "X2", "X3", "X4"};
  for (std::size_t i = 0; i < 4; ++i) {
    CAPTURE(i);
    std::size_t a = 0;
    while (a < 4 && r.attribution_parameters[a] != names[i]) ++a;
    REQUIRE(a < 4);
    const double rho = r.correlations[a];
    CHECK_THAT(rho, close_abs(gains[i] * sds[i] / sigma, 0.03));
    explained += rho * rho;
  }
  // A linear measurement: the squared correlations account for all of its variance, up to
  // the chance correlations between the inputs in the sample (order 1/sqrt(n)).
  CHECK_THAT(explained, close_abs(1.0, 0.03));
}

TEST_CASE("failure attribution points at the parameter that fails the builds", "[worst_case]") {
  // sd(y) = sqrt(0.0114) = 0.107, X3 (gain -3, sd 0.03) carries 71 % of the variance.
  // Spec y <= nominal + 0.1 (about 0.94 sd): 17 % fail. Among them each input shifts by
  // rho_i lambda sd, lambda = phi(z)/(1 - Phi(z)) = 1.47 (common practice, truncated normal):
  // X3 about -1.24, X2 and X4 about +0.55, X1 about +0.14.
  Design d = linear_design();
  Spec spec;
  spec.measurement = "y";
  spec.max = 2.9 + 0.1;
  d.specs = {spec};
  const Study study(d);
  RunOptions o;
  o.samples = 20000;
  o.threads = 2;
  const YieldResult r = study.run(o);
  REQUIRE(r.passed < r.samples);
  std::size_t largest = 0;
  for (std::size_t a = 1; a < r.failure_shift.size(); ++a) {
    if (std::fabs(r.failure_shift[a]) > std::fabs(r.failure_shift[largest])) largest = a;
  }
  CHECK(r.attribution_parameters[largest] == "X3");
  CHECK_THAT(r.failure_shift[largest], close_abs(-1.24, 0.1));
  for (std::size_t a = 0; a < r.failure_shift.size(); ++a) {
    if (r.attribution_parameters[a] == "X4") CHECK_THAT(r.failure_shift[a], close_abs(0.55, 0.1));
    if (r.attribution_parameters[a] == "X1") CHECK_THAT(r.failure_shift[a], close_abs(0.14, 0.1));
  }
  // A two-sided spec |y - 2.9| <= 0.1 fails at both ends: X3's shifts cancel but its spread
  // in the failing builds is wide. For y = rho z + sqrt(1 - rho^2) e, the RMS of z over
  // |y| > c is sqrt(1 + rho^2 c phi(c)/(1 - Phi(c))) (common practice, truncated normal
  // moments); c = 0.937, rho = -0.843 gives 1.41.
  spec.min = 2.9 - 0.1;
  d.specs = {spec};
  const YieldResult both = Study(d).run(o);
  for (std::size_t a = 0; a < both.failure_shift.size(); ++a) {
    CAPTURE(both.attribution_parameters[a]);
    CHECK(std::fabs(both.failure_shift[a]) < 0.1);
    if (both.attribution_parameters[a] == "X3") {
      CHECK_THAT(both.failure_spread[a], close_abs(1.41, 0.05));
    }
  }
}

TEST_CASE("tolerances of the laws", "[fast][worst_case]") {
  Circuit c;
  c.add_voltage_source("V1", "a", "gnd", 1.0);
  c.add_resistor("RA", "a", "b", 1e3);
  c.add_resistor("RB", "b", "gnd", 1e3);
  c.add_resistor("RC", "b", "gnd", 2e3);
  Design d;
  d.circuit = c;
  Measurement m;
  m.name = "vb";
  m.kind = MeasurementKind::node_voltage;
  m.output = {"b"};
  d.measurements = {m};
  Variation uniform;
  uniform.targets = {"RA"};
  uniform.distribution = Distribution::uniform;
  uniform.tolerance = 0.01;
  Variation triangular;
  triangular.targets = {"RB"};
  triangular.distribution = Distribution::triangular;
  triangular.tolerance = 0.02;
  Variation with_lot;
  with_lot.targets = {"RC"};
  with_lot.tolerance = 0.01;
  with_lot.lot_tolerance = 0.005;
  d.variations = {uniform, triangular, with_lot};
  const Study study(d);
  const auto t = parameter_tolerances(study);
  REQUIRE(t.size() == 3);
  // source: standard deviations of the uniform (t / sqrt 3) and symmetric triangular
  // (t / sqrt 6) laws on +-t (common practice).
  CHECK(t[0].name == "RA");
  CHECK_THAT(t[0].std_dev, close_rel(10.0 / std::sqrt(3.0), 1e-12));
  CHECK_THAT(t[0].high, close_rel(1010.0, 1e-15));
  CHECK_THAT(t[1].std_dev, close_rel(20.0 / std::sqrt(6.0), 1e-12));
  // Normal part (20/3) and normal lot (10/3) spreads add in quadrature; limits add.
  CHECK_THAT(t[2].std_dev, close_rel(std::sqrt(400.0 / 9.0 + 100.0 / 9.0), 1e-12));
  CHECK_THAT(t[2].low, close_rel(2000.0 - 30.0, 1e-15));
  // A nonlinear but monotone divider: EVA at the sensitivity-signed vertex is the extreme
  // of all eight corners.
  const WorstCaseResult w = worst_case(study);
  CHECK(w.measurements[0].high == w.measurements[0].corner_high);
  CHECK(w.measurements[0].low == w.measurements[0].corner_low);
}

TEST_CASE("difference amplifier: EVA worst CMRR is the mismatch bound", "[worst_case]") {
  // Gain 100 with 1 % resistors: R1 = R3 = 1 k, R2 = R4 = 100 k.
  Design d;
  d.circuit = difference_amplifier(1e3, 100e3, 1e3, 100e3, ideal_opamp(), 0.0, 0.0);
  d.measurements = {measure("ad", MeasurementKind::differential_gain, {"VP", "VM"}, {"out"}),
                    measure("cmrr", MeasurementKind::cmrr, {"VP", "VM"}, {"out"})};
  Variation v;
  v.targets = {"R*"};
  v.distribution = Distribution::uniform;
  v.tolerance = 0.01;
  d.variations = {v};
  const Study study(d);
  const WorstCaseResult w = worst_case(study);
  const MeasurementWorstCase& cmrr = w.measurements.at(1);
  CHECK(cmrr.through_common_mode);
  CHECK(std::isinf(cmrr.nominal));
  // source: /work/shared/references.md [computed, exact expression at the worst corner]:
  // G = 100, t = 1 % -> CMRR 2524.75 (68.04 dB).
  const double worst = 20.0 * std::log10(2524.75);
  CHECK_THAT(cmrr.low, close_abs(worst, 2e-5));
  // source: Pallas-Areny & Webster, IEEE Trans. Instrum. Meas. 40(4), 1991: worst-case
  // CMRR ~ (1 + G)/(4 t) = 2525 to first order in t.
  const double bound = 20.0 * std::log10(101.0 / 0.04);
  CHECK_THAT(cmrr.low, close_abs(bound, 20.0 * std::log10(1.0 + 0.01)));
  // The vertex found from the common-mode gain's signs is the worst of all 16 corners.
  REQUIRE(w.exhaustive);
  CHECK_THAT(cmrr.corner_low, close_abs(cmrr.low, 1e-9));
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2 (A_d = R2/R1 = 100).
  CHECK_THAT(w.measurements[0].nominal, close_rel(100.0, 1e-12));
}

TEST_CASE("a sweep of tolerance and gain setting", "[sweep]") {
  // Gain-10 difference amplifier, spec on the differential gain 9.95 to 10.05.
  Design d;
  d.circuit = difference_amplifier(10e3, 100e3, 10e3, 100e3, ideal_opamp(), 0.0, 0.0);
  d.measurements = {measure("ad", MeasurementKind::differential_gain, {"VP", "VM"}, {"out"})};
  Variation v;
  v.targets = {"R*"};
  v.tolerance = 0.01;
  d.variations = {v};
  Spec spec;
  spec.measurement = "ad";
  spec.min = 9.95;
  spec.max = 10.05;
  d.specs = {spec};
  RunOptions o;
  o.samples = 4000;
  o.threads = 1;
  ParameterSweepAxis tolerance{SweepSetting::tolerance, "R*", {0.001, 0.01}};
  ParameterSweepAxis gain{SweepSetting::nominal, "R2", {90e3, 100e3}};
  const ParameterSweepResult sweep = sweep_parameters(d, {tolerance, gain}, o);
  REQUIRE(sweep.points.size() == 4);
  // First axis slowest.
  CHECK(sweep.points[1].settings == std::vector<double>{0.001, 100e3});
  // source: Sedra & Smith, Microelectronic Circuits, ch. 2: A_d = R2/R1 with matched
  // ratios (R4/R3 = R2/R1); with R2 = 90 k and R4 = 100 k, A_d = 1/2 [R2/R1 + (R4/(R3+R4))(1+R2/R1)].
  const double mismatched = 0.5 * (9.0 + (10.0 / 11.0) * 10.0);
  CHECK_THAT(sweep.points[0].result.measurements[0].nominal, close_rel(mismatched, 1e-12));
  CHECK(sweep.points[0].result.yield == 0.0);  // 9.045 is far outside the spec
  // 0.1 % parts: sd of the gain about 0.0045 (RSS), 11 sd inside the limits: all pass.
  CHECK(sweep.points[1].result.yield == 1.0);
  // 1 % parts: the point equals a plain run of the unchanged design (same seed).
  const YieldResult plain = Study(d).run(o);
  CHECK(sweep.points[3].result.passed == plain.passed);
  CHECK(sweep.points[3].result.yield < 0.9);
  // The sd of the gain scales with the tolerance (linear to first order).
  CHECK_THAT(sweep.points[3].result.measurements[0].stats.std_dev() /
                 sweep.points[1].result.measurements[0].stats.std_dev(),
             close_rel(10.0, 2e-2));
  ParameterSweepAxis nothing{SweepSetting::tolerance, "VP", {0.01}};
  CHECK_THROWS_AS(sweep_parameters(d, {nothing}, o), DesignError);
}
