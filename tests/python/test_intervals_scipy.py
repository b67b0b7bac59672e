"""Binomial confidence intervals against scipy and against their definitions."""

from __future__ import annotations

import math

import pytest

import lotwise

scipy_stats = pytest.importorskip("scipy.stats")
sympy = pytest.importorskip("sympy")

GRID = sorted({(k, n) for n in (1, 2, 3, 10, 50, 100, 1000, 20000)
               for k in (0, 1, n // 3, n // 2, n - 1, n) if 0 <= k <= n})
LEVELS = [0.8, 0.95, 0.99]


@pytest.mark.parametrize("confidence", LEVELS, ids=[f"{c:g}" for c in LEVELS])
@pytest.mark.parametrize(("k", "n"), GRID, ids=[f"{k}of{n}" for k, n in GRID])
def test_clopper_pearson_matches_scipy(k, n, confidence):
    # source: scipy.stats.binomtest(k, n).proportion_ci(method="exact"), which finds
    # the Clopper-Pearson bounds by root finding on the binomial tails (brentq,
    # xtol 2e-12), where lotwise inverts the incomplete beta function.
    expected = scipy_stats.binomtest(k, n).proportion_ci(confidence_level=confidence, method="exact")
    low, high = lotwise.clopper_pearson(k, n, confidence)
    assert low == pytest.approx(expected.low, abs=1e-10)
    assert high == pytest.approx(expected.high, abs=1e-10)


@pytest.mark.parametrize("confidence", LEVELS, ids=[f"{c:g}" for c in LEVELS])
@pytest.mark.parametrize(("k", "n"), GRID, ids=[f"{k}of{n}" for k, n in GRID])
def test_wilson_matches_scipy(k, n, confidence):
    # source: scipy.stats.binomtest(k, n).proportion_ci(method="wilson"). scipy's
    # "wilson" is the score interval without continuity correction (that one is
    # "wilsoncc"; checked in scipy/stats/_binomtest.py), with the bounds set to exactly
    # 0 at k = 0 and 1 at k = n, as lotwise does.
    expected = scipy_stats.binomtest(k, n).proportion_ci(confidence_level=confidence, method="wilson")
    low, high = lotwise.wilson(k, n, confidence)
    assert low == pytest.approx(expected.low, abs=1e-10)
    assert high == pytest.approx(expected.high, abs=1e-10)


def test_clopper_pearson_published_example():
    # source: scipy.stats.binomtest documentation example, k = 7, n = 50, exact 95 %:
    # [0.05819170033997342, 0.26739600249700846].
    low, high = lotwise.clopper_pearson(7, 50, 0.95)
    assert low == pytest.approx(0.05819170033997342, abs=1e-10)
    assert high == pytest.approx(0.26739600249700846, abs=1e-10)


@pytest.mark.parametrize(("k", "n"), [(0, 100), (50, 1000), (999, 1000)],
                         ids=["0of100", "50of1000", "999of1000"])
def test_reference_values(k, n):
    # Reference values, 95 %, computed independently with Boost.Math and recorded in the
    # project's reference table (shared/references.md, "Yield confidence intervals").
    table = {
        (0, 100): ((0.0, 0.0362166927), (0.0, 0.0369934982)),
        (50, 1000): ((0.0373353976, 0.0653904879), (0.0381302624, 0.0653138202)),
        (999, 1000): ((0.9944410757, 0.9999746825), None),
    }
    cp, wilson = table[(k, n)]
    assert lotwise.clopper_pearson(k, n) == pytest.approx(cp, abs=2e-10)
    if wilson is not None:
        assert lotwise.wilson(k, n) == pytest.approx(wilson, abs=2e-10)


@pytest.mark.parametrize(("k", "n"), [(1, 5), (3, 7), (7, 50), (20, 50), (49, 50)],
                         ids=["1of5", "3of7", "7of50", "20of50", "49of50"])
def test_clopper_pearson_solves_its_defining_equations(k, n):
    # Clopper & Pearson, Biometrika 26(4), 1934: the lower bound p_L solves
    # P(X >= k | p_L) = alpha/2 and the upper bound p_U solves P(X <= k | p_U) = alpha/2,
    # X ~ Binomial(n, p). The tails are summed here exactly in rationals (sympy), with
    # the bounds as given: no beta function and no root finder involved.
    alpha = sympy.Rational(5, 100)
    low, high = lotwise.clopper_pearson(k, n, 0.95)

    def tail(p, ks):
        p = sympy.Rational(p)
        return sum(sympy.binomial(n, j) * p**j * (1 - p) ** (n - j) for j in ks)

    upper_tail = tail(low, range(k, n + 1))
    lower_tail = tail(high, range(0, k + 1))
    assert float(upper_tail - alpha / 2) == pytest.approx(0.0, abs=1e-13)
    assert float(lower_tail - alpha / 2) == pytest.approx(0.0, abs=1e-13)


@pytest.mark.parametrize("n", [1, 10, 598, 20000])
def test_clopper_pearson_all_passed_closed_form(n):
    # With k = n the lower bound is the beta quantile B^-1(alpha/2; n, 1) = (alpha/2)^(1/n)
    # (closed form of the Beta(n, 1) quantile; common practice).
    low, high = lotwise.clopper_pearson(n, n, 0.95)
    assert high == 1.0
    assert low == pytest.approx(0.025 ** (1.0 / n), rel=1e-13)


@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.999], ids=["90", "95", "99.9"])
def test_result_intervals_match_scipy(difference_amplifier, confidence):
    result = difference_amplifier.run(samples=3000, seed=3, confidence=confidence)
    assert result.confidence == confidence
    assert 0 < result.passed < result.samples
    # source: scipy.stats.binomtest(...).proportion_ci(method="exact")
    expected = scipy_stats.binomtest(result.passed, result.samples).proportion_ci(
        confidence_level=confidence, method="exact")
    assert result.interval == pytest.approx((expected.low, expected.high), abs=1e-10)
    for spec in result.specs:
        expected = scipy_stats.binomtest(spec.passed, result.samples).proportion_ci(
            confidence_level=confidence, method="exact")
        assert spec.interval == pytest.approx((expected.low, expected.high), abs=1e-10)


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: lotwise.clopper_pearson(5, 3), "a binomial interval needs successes <= trials"),
        (lambda: lotwise.wilson(0, 0), "a binomial interval needs at least one trial"),
        (lambda: lotwise.clopper_pearson(1, 2, 1.0),
         "confidence level must lie strictly between 0 and 1 (got 1.000000)"),
        (lambda: lotwise.clopper_pearson(-1, 2), "k must be >= 0 (got -1)"),
    ],
    ids=["k-above-n", "no-trials", "confidence-1", "negative-k"],
)
def test_bad_interval_arguments(call, message):
    with pytest.raises(lotwise.Error) as caught:
        call()
    assert str(caught.value) == message


def test_wilson_is_narrower_than_clopper_pearson_in_the_middle():
    # Clopper-Pearson is conservative (coverage >= nominal); Wilson is not
    # (Newcombe, Stat. Med. 17, 1998), so at p near 1/2 its interval is shorter.
    cp = lotwise.clopper_pearson(500, 1000)
    w = lotwise.wilson(500, 1000)
    assert (w[1] - w[0]) < (cp[1] - cp[0])
    assert math.isclose(sum(w) / 2, 0.5, rel_tol=1e-15)
