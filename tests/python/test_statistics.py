"""Yield statistics from Python: intervals, capability, normal fit, histograms, coverage,
replicates, adaptive runs and attribution, checked against scipy and closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import lotwise


@pytest.mark.parametrize(("k", "n"), [(0, 10), (1, 10), (7, 10), (10, 10), (512, 1000), (3, 20000)])
@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.99])
def test_jeffreys_matches_the_beta_posterior(k, n, confidence):
    # Jeffreys: equal-tailed Beta(k + 1/2, n - k + 1/2) quantiles, 0 at k = 0 and 1 at
    # k = n (Brown, Cai & DasGupta, Statist. Sci. 16(2), 2001); quantiles from scipy.
    a = (1 - confidence) / 2
    low = 0.0 if k == 0 else stats.beta.ppf(a, k + 0.5, n - k + 0.5)
    high = 1.0 if k == n else stats.beta.ppf(1 - a, k + 0.5, n - k + 0.5)
    got = lotwise.jeffreys(k, n, confidence)
    assert got[0] == pytest.approx(low, abs=1e-10)
    assert got[1] == pytest.approx(high, abs=1e-10)
    assert lotwise.binomial_interval("jeffreys", k, n, confidence) == got


@pytest.mark.parametrize(("k", "n"), [(0, 50), (3, 50), (49, 50), (9000, 10000)])
def test_clopper_pearson_upper_matches_scipy(k, n):
    # One-sided exact bound B^-1(confidence; k + 1, n - k) (scipy.stats.beta.ppf).
    assert lotwise.clopper_pearson_upper(k, n, 0.95) == pytest.approx(
        stats.beta.ppf(0.95, k + 1, n - k), abs=1e-10)


def test_rule_of_three():
    # No failures in n builds: the 95 % upper bound is 1 - 0.05^(1/n), about 3/n
    # (Hanley & Lippman-Hand, JAMA 249(13), 1983).
    n = 3000
    bound = lotwise.clopper_pearson_upper(0, n, 0.95)
    assert bound == pytest.approx(1 - 0.05 ** (1 / n), rel=1e-12)
    assert bound == pytest.approx(3 / n, rel=0.01)


def test_binomial_interval_rejects_an_unknown_method():
    with pytest.raises(lotwise.Error, match="unknown interval method 'exact'"):
        lotwise.binomial_interval("exact", 1, 10)


@pytest.fixture(scope="module")
def run(difference_amplifier):
    return difference_amplifier.run(samples=6000, seed=4, keep_samples=True)


def test_result_intervals_match_scipy(run):
    # scipy.stats.binomtest(...).proportion_ci: "exact" is Clopper-Pearson, "wilson" the
    # Wilson score interval; Jeffreys from scipy.stats.beta.ppf.
    test = stats.binomtest(run.passed, run.samples)
    for method, got in (("exact", run.interval), ("wilson", run.wilson_interval)):
        ci = test.proportion_ci(confidence_level=run.confidence, method=method)
        assert got == pytest.approx((ci.low, ci.high), abs=1e-10)
    k, n = run.passed, run.samples
    assert run.jeffreys_interval == pytest.approx(
        (stats.beta.ppf(0.025, k + 0.5, n - k + 0.5), stats.beta.ppf(0.975, k + 0.5, n - k + 0.5)),
        abs=1e-10)
    assert run.failure_upper_bound == pytest.approx(stats.beta.ppf(0.95, n - k + 1, k), abs=1e-10)
    for s in run.specs:
        ci = stats.binomtest(s.passed, run.samples).proportion_ci(method="wilson")
        assert s.wilson_interval == pytest.approx((ci.low, ci.high), abs=1e-10)
        assert s.jeffreys_interval == lotwise.jeffreys(s.passed, run.samples)


def test_spec_capability_and_normal_fit_follow_the_measurement(run):
    # Cp, Cpk from the handbook formulas (NIST/SEMATECH e-Handbook 6.1.6) on the run's
    # mean and standard deviation; the normal fit from scipy.stats.norm.
    for s in run.specs:
        m = run.measurements[s.measurement]
        mean, sd = m.mean, m.std_dev
        usl = math.inf if s.max is None else s.max
        lsl = -math.inf if s.min is None else s.min
        fit = stats.norm.cdf(usl, mean, sd) - stats.norm.cdf(lsl, mean, sd)
        assert s.normal_fit == pytest.approx(fit, abs=1e-12)
        c = s.capability
        if s.min is not None and s.max is not None:
            assert c.cp == pytest.approx((usl - lsl) / (6 * sd), rel=1e-12)
        else:
            assert math.isnan(c.cp)
        sides = [v for v in ((usl - mean) / (3 * sd), (mean - lsl) / (3 * sd)) if math.isfinite(v)]
        assert c.cpk == pytest.approx(min(sides), rel=1e-12)
        assert c.cpk_interval[0] < c.cpk < c.cpk_interval[1]


def test_capability_handbook_example():
    # NIST/SEMATECH e-Handbook 6.1.6 example (from memory): USL 20, LSL 8, mean 16, s 2
    # give Cp = 1 and Cpk = 0.6667.
    c = lotwise.capability(8, 20, 16, 2, 50)
    assert c.cp == pytest.approx(1.0, rel=1e-12)
    assert c.cpk == pytest.approx(2 / 3, rel=1e-12)
    assert (c.cpu, c.cpl) == pytest.approx((2 / 3, 4 / 3), rel=1e-12)
    # Cp interval from the chi-square law of s^2 (Montgomery, ch. 8), scipy quantiles.
    n = 50
    low = 1.0 * math.sqrt(stats.chi2.ppf(0.025, n - 1) / (n - 1))
    high = 1.0 * math.sqrt(stats.chi2.ppf(0.975, n - 1) / (n - 1))
    assert c.cp_interval == pytest.approx((low, high), rel=1e-10)
    # Cpk interval: Bissell (Applied Statistics 39(3), 1990).
    z = stats.norm.ppf(0.975)
    half = z * math.sqrt(1 / (9 * n * (2 / 3) ** 2) + 1 / (2 * (n - 1)))
    assert c.cpk_interval == pytest.approx((2 / 3 * (1 - half), 2 / 3 * (1 + half)), rel=1e-10)
    one_sided = lotwise.capability(None, 20, 16, 2, 50)
    assert math.isnan(one_sided.cp) and one_sided.cpk == pytest.approx(2 / 3, rel=1e-12)


def test_normal_fit_yield_matches_scipy():
    assert lotwise.normal_fit_yield(-1, 2, 0.5, 1.5) == pytest.approx(
        stats.norm.cdf(2, 0.5, 1.5) - stats.norm.cdf(-1, 0.5, 1.5), abs=1e-14)
    assert math.isnan(lotwise.normal_fit_yield(0, 1, 0.5, 0.0))


def test_measurement_histogram_and_coverage_agree_with_the_samples(run):
    for name, m in run.measurements.items():
        values = run.samples_of(name)
        finite = values[np.isfinite(values)]
        if name == "cmrr" or m.histogram is None:
            continue
        h = m.histogram
        assert h.total == len(finite) and h.bins == 4096
        assert int(h.counts.sum()) + h.below + h.above == h.total
        width = (h.high - h.low) / h.bins
        # The histogram's quantile lies within one bin (plus one sample spacing) of the
        # samples' own quantile.
        for p in (0.1, 0.5, 0.9):
            assert abs(m.quantile(p) - np.quantile(finite, p)) <= 2 * width + 1e-12
        lo, hi = m.coverage
        assert abs(lo - np.quantile(finite, 0.025)) <= 2 * width + 1e-12
        assert abs(hi - np.quantile(finite, 0.975)) <= 2 * width + 1e-12
        frame = h.to_frame()
        assert list(frame.columns) == ["low", "high", "count"] and len(frame) == h.bins


def test_histogram_class_quantiles():
    # 10^4 evenly spread values on [0, 1): the p-quantile is p to within one bin.
    h = lotwise.Histogram(0.0, 1.0, 100)
    h.add((np.arange(10000) + 0.5) / 10000)
    h.add(2.0)
    h.add(float("nan"))
    assert (h.total, h.above, h.below) == (10001, 1, 0)
    assert h.quantile(0.5) == pytest.approx(0.5, abs=0.01)
    other = lotwise.Histogram(0.0, 1.0, 100)
    other.add([0.25, 0.75])
    h.merge(other)
    assert h.total == 10003
    with pytest.raises(lotwise.Error):
        h.merge(lotwise.Histogram(0.0, 2.0, 100))
    with pytest.raises(lotwise.Error):
        lotwise.Histogram(1.0, 1.0, 10)
    assert h.coarsened(10).bins <= 10


def test_histogram_bins_zero_keeps_none(difference_amplifier):
    r = difference_amplifier.run(samples=2000, histogram_bins=0)
    assert all(m.histogram is None for m in r.measurements.values())
    assert all(math.isnan(m.coverage[0]) for m in r.measurements.values())


def test_replicates_give_standard_errors(difference_amplifier):
    single = difference_amplifier.run(samples=4000, seed=2)
    assert single.replicates == 1 and math.isnan(single.yield_standard_error)
    sobol = difference_amplifier.run(samples=4096, seed=2, sampler="sobol")
    assert sobol.sampler == "sobol" and sobol.replicates == 16
    assert sobol.yield_standard_error > 0
    lo, hi = sobol.replicate_interval
    assert lo < sobol.yield_fraction < hi
    assert all(s.standard_error >= 0 for s in sobol.specs)
    assert all(m.mean_standard_error > 0 for m in sobol.measurements.values() if m.name != "cmrr")
    lhs = difference_amplifier.run(samples=2000, seed=2, sampler="latin_hypercube", replicates=4)
    assert lhs.replicates == 4
    with pytest.raises(lotwise.RunError, match="unknown sampler 'quasi'"):
        difference_amplifier.run(samples=100, sampler="quasi")


def test_adaptive_run_stops_at_the_target(difference_amplifier):
    r = difference_amplifier.run(samples=10**6, seed=5, chunk_size=500, target_half_width="1%")
    assert r.target_met and r.complete
    assert r.samples < r.requested and r.samples % 500 == 0
    lo, hi = r.interval
    assert (hi - lo) / 2 <= 0.01
    # One chunk fewer would not have met it: the stop is at the first chunk boundary.
    ci = stats.binomtest(r.passed, r.samples).proportion_ci(method="exact")
    assert (ci.low, ci.high) == pytest.approx((lo, hi), abs=1e-10)
    with pytest.raises(lotwise.RunError, match="half-width"):
        difference_amplifier.run(samples=100, target_half_width=0.7)


def non_inverting_x11() -> lotwise.Design:
    d = lotwise.Design()
    d.voltage_source("VIN", "in", "gnd", 0.1)
    d.opamp("U1", "in", "fb", "out")
    d.resistor("RF", "out", "fb", "10k")
    d.resistor("RG", "fb", "gnd", "1k")
    d.vary(["RF", "RG"], "1%")
    d.measure("gain", "gain", inputs="VIN", output="out")
    d.spec("gain", min=10.95)
    return d


def test_attribution_of_a_ratio_gain():
    # gain = 1 + RF/RG: to first order d(gain) = (RF/RG)(dRF/RF - dRG/RG), and with equal
    # relative spreads each resistor carries half the variance: correlations +-1/sqrt(2).
    # Source: first-order error propagation (common practice).
    r = non_inverting_x11().compile().run(samples=40000, seed=9)
    frame = r.correlations_frame()
    assert frame.loc["gain", "RF"] == pytest.approx(1 / math.sqrt(2), abs=0.02)
    assert frame.loc["gain", "RG"] == pytest.approx(-1 / math.sqrt(2), abs=0.02)
    # Failing builds (gain below 10.95) have a low RF and a high RG.
    assert r.failure_shift["RF"] < -0.5 and r.failure_shift["RG"] > 0.5
    assert set(r.attribution_frame().index) == {"RF", "RG"}
    off = non_inverting_x11().compile().run(samples=1000, attribution=False)
    assert off.attribution_parameters == [] and off.correlations.shape == (1, 0)


def test_regression_and_rank_sensitivity_of_a_ratio_gain():
    # The same first-order argument as above: for a near-linear measurement the
    # standardized regression coefficients are +-1/sqrt(2), R^2 close to 1, and the
    # Spearman rank correlations (scipy.stats.spearmanr on the kept samples) agree.
    r = non_inverting_x11().compile().run(samples=20000, seed=9, keep_samples=True,
                                          regression_samples=5000)
    names = r.attribution_parameters
    src = r.standardized_regression[0]
    assert src[names.index("RF")] == pytest.approx(1 / math.sqrt(2), abs=0.02)
    assert src[names.index("RG")] == pytest.approx(-1 / math.sqrt(2), abs=0.02)
    assert r.regression_r_squared["gain"] > 0.999
    assert r.regression_rows == 5000
    rho = stats.spearmanr(r.parameter_values("RF")[:5000], r.samples_of("gain")[:5000]).statistic
    assert r.rank_correlations[0, names.index("RF")] == pytest.approx(rho, abs=1e-9)
    frame = r.sensitivity_frame()
    assert frame.loc[("gain", "RG"), "standardized_regression"] == src[names.index("RG")]
    assert r.varied_parameters == ["RF", "RG"]
    assert r.parameter_values().shape == (20000, 2)
    assert np.shares_memory(r.parameter_values("RG"), r.parameter_values())
    assert list(r.samples_frame(parameters=True).columns) == ["gain", "passed", "RF", "RG"]
    with pytest.raises(lotwise.Error, match="no varied parameter called 'R9'"):
        r.parameter_values("R9")
