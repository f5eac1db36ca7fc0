"""Reference tests for the sample-ratio-mismatch check (proportio.stats.allocation)."""

from __future__ import annotations

import dataclasses
import math
from fractions import Fraction

import numpy as np
import pytest
from scipy.special import chdtrc, gammaln, log_ndtr, logsumexp
from scipy.stats import binomtest, chisquare

from proportio.stats.allocation import (
    AllocationCheck,
    _log_gammaincc_cf,
    allocation_check,
    log10_chi2_sf,
)

LN10 = math.log(10.0)


def _exact_statistic(observed: list[int], weights: list[int]) -> float:
    """Pearson's statistic from its definition in exact rational arithmetic."""
    total, wsum = sum(observed), sum(weights)
    stat = Fraction(0)
    for o, w in zip(observed, weights, strict=True):
        e = Fraction(w * total, wsum)
        stat += (o - e) ** 2 / e
    return float(stat)


def _log10_sf_df1(statistic: float) -> float:
    # A chi-square with 1 df is the square of a standard normal: P(X >= s) = 2 Phi(-sqrt(s)).
    # scipy.special.log_ndtr keeps the log accurate far below the float64 range.
    return (math.log(2.0) + float(log_ndtr(-math.sqrt(statistic)))) / LN10


def _log10_sf_even(statistic: float, df: int) -> float:
    # For even df = 2m, P(X >= s) = exp(-s/2) sum_{j<m} (s/2)^j / j! (the chi-square/Poisson
    # identity, by repeated integration by parts), evaluated here in log space.
    half = statistic / 2.0
    j = np.arange(df // 2)
    return float(logsumexp(j * math.log(half) - gammaln(j + 1)) - half) / LN10


def test_matches_scipy_chisquare_on_random_inputs() -> None:
    rng = np.random.default_rng(31337)
    for trial in range(2000):
        k = int(rng.integers(2, 9))
        weights = rng.uniform(0.05, 1.0, size=k) if trial % 3 else None
        shares = np.full(k, 1.0 / k) if weights is None else weights / weights.sum()
        scale = 10 ** rng.uniform(0, 7)
        tilt = shares * rng.uniform(0.8, 1.25, size=k)  # sometimes a real mismatch
        observed = rng.multinomial(int(scale) + 1, tilt / tilt.sum())
        if trial % 17 == 0:
            observed[int(rng.integers(k))] = 0
        result = allocation_check(observed.tolist(), None if weights is None else weights.tolist())

        expected = shares * observed.sum()
        # scipy.stats.chisquare (Pearson goodness of fit, df = k - 1)
        ref = chisquare(observed, f_exp=expected)
        assert result.statistic == pytest.approx(ref.statistic, rel=1e-12, abs=1e-12)
        assert result.p_value == pytest.approx(ref.pvalue, rel=1e-12, abs=1e-300)
        assert result.df == k - 1
        assert result.mismatch == (ref.pvalue < 0.001)
        if ref.pvalue > 1e-280:
            assert result.log10_p_value == pytest.approx(math.log10(ref.pvalue), rel=1e-12, abs=1e-12)
        # Pearson residuals (O - E) / sqrt(E), squares summing to the statistic (definition)
        residuals = np.array([arm.standardized_residual for arm in result.arms])
        np.testing.assert_allclose(
            residuals, (observed - expected) / np.sqrt(expected), rtol=1e-12, atol=1e-12
        )
        assert float(np.sum(residuals**2)) == pytest.approx(ref.statistic, rel=1e-10, abs=1e-12)
        np.testing.assert_allclose([a.expected_share for a in result.arms], shares, rtol=1e-15, atol=0)
        np.testing.assert_allclose(
            [a.observed_share for a in result.arms], observed / observed.sum(), rtol=1e-15
        )
        assert [a.observed for a in result.arms] == observed.tolist()


def test_huge_imbalance_gives_a_finite_log_p() -> None:
    # 10^12 vs 0.9 * 10^12 units in a planned 50/50 split.
    result = allocation_check([10**12, 9 * 10**11])
    assert result.statistic == pytest.approx(_exact_statistic([10**12, 9 * 10**11], [1, 1]), rel=1e-12)
    assert not math.isnan(result.p_value)
    assert 0.0 <= result.p_value < 1e-300
    assert math.isfinite(result.log10_p_value) and result.log10_p_value < -1e9
    assert result.log10_p_value == pytest.approx(_log10_sf_df1(result.statistic), rel=1e-12)
    assert result.mismatch
    assert "p < 1e-300" in result.summary


def test_totals_near_a_trillion_match_exact_arithmetic() -> None:
    cases = [
        ([500_000_123_456, 499_999_876_544], [1, 1]),  # 0.00001% drift, 10^12 units
        ([333_333_000_000, 333_334_000_000, 333_333_000_001], [1, 1, 1]),
        ([10**12, 10**12 - 1, 2 * 10**12 + 5], [1, 1, 2]),
        ([999_999_999_999, 1], [1, 1]),
    ]
    for observed, weights in cases:
        result = allocation_check(observed, weights)
        exact = _exact_statistic(observed, weights)
        assert result.statistic == pytest.approx(exact, rel=1e-12, abs=1e-12)
        # scipy.special.chdtrc (chi-square survival function)
        assert result.p_value == pytest.approx(float(chdtrc(len(observed) - 1, exact)), rel=1e-10, abs=1e-300)
        assert math.isfinite(result.log10_p_value) and result.log10_p_value <= 0.0
        assert not any(math.isnan(a.standardized_residual) for a in result.arms)


def test_all_units_in_one_arm() -> None:
    result = allocation_check([0, 0, 1200])
    # Definition: E = 400 each; (0-400)^2/400 * 2 + (800)^2/400 = 400 + 400 + 1600
    assert result.statistic == pytest.approx(2400.0, rel=1e-14)
    assert result.mismatch
    assert result.log10_p_value == pytest.approx(_log10_sf_even(2400.0, 2), rel=1e-12)
    assert result.arms[2].standardized_residual == pytest.approx(40.0, rel=1e-14)
    assert result.arms[0].standardized_residual == pytest.approx(-20.0, rel=1e-14)
    assert "arm 3" in result.summary


def test_one_empty_arm() -> None:
    result = allocation_check([5000, 5000, 0], [1, 1, 1])
    assert result.mismatch
    assert result.arms[2].observed_share == 0.0
    # scipy.stats.chisquare
    assert result.statistic == pytest.approx(chisquare([5000, 5000, 0]).statistic, rel=1e-12)


def test_perfect_split_and_single_unit() -> None:
    perfect = allocation_check([2500, 2500, 5000], [0.25, 0.25, 0.5])
    assert perfect.statistic == 0.0 and perfect.p_value == 1.0 and perfect.log10_p_value == 0.0
    assert not perfect.mismatch
    assert "consistent with the plan" in perfect.summary

    single = allocation_check([1, 0])
    # Definition: E = 0.5 each, statistic 0.25/0.5 * 2 = 1
    assert single.statistic == pytest.approx(1.0, rel=1e-15)
    # scipy.special.chdtrc
    assert single.p_value == pytest.approx(float(chdtrc(1, 1.0)), rel=1e-14)
    assert len(single.warnings) == 1 and "approximation may be poor" in single.warnings[0]


def test_small_expected_count_warning_gives_the_exact_binomial_p() -> None:
    result = allocation_check([7, 1], [0.5, 0.5])
    assert len(result.warnings) == 1
    # scipy.stats.binomtest (exact two-sided binomial test)
    exact = binomtest(7, 8, 0.5).pvalue
    assert f"p = {exact:.3g}" in result.warnings[0]
    # Three arms: the warning names the arm but no binomial p-value.
    result3 = allocation_check([100, 100, 2], [0.49, 0.49, 0.02])
    assert len(result3.warnings) == 1 and "arm(s) 3" in result3.warnings[0]
    assert "binomial" not in result3.warnings[0]
    # Common practice, no published source: no warning when every expected count is at least 5.
    assert allocation_check([5, 5]).warnings == ()


def test_threshold_decides_the_mismatch() -> None:
    # Observed 10,210 vs 9,790: statistic 8.82, p about 0.003.
    observed = [10_210, 9_790]
    loose = allocation_check(observed, threshold=0.01)
    strict = allocation_check(observed)
    assert 0.001 < strict.p_value < 0.01
    assert loose.mismatch and not strict.mismatch
    assert strict.threshold == 0.001
    assert "should not be trusted until the cause" in loose.summary
    assert "differs from the plan" in loose.summary
    assert "consistent" in strict.summary
    for summary in (loose.summary, strict.summary):
        assert "\n" not in summary and summary.endswith(".")


def test_log10_sf_in_the_underflow_range_matches_closed_forms() -> None:
    for statistic in (1500.0, 5e3, 1e6, 3.7e10, 1e300):
        assert log10_chi2_sf(statistic, 1) == pytest.approx(_log10_sf_df1(statistic), rel=1e-12)
        for df in (2, 4, 10, 50):
            assert log10_chi2_sf(statistic, df) == pytest.approx(_log10_sf_even(statistic, df), rel=1e-12)


def test_log10_sf_agrees_with_scipy_where_both_are_representable() -> None:
    # scipy.special.chdtrc is accurate down to ~1e-300; the continued fraction that takes over
    # below 1e-280 must agree with it there, for odd and even df.
    rng = np.random.default_rng(4)
    for _ in range(500):
        df = int(rng.integers(1, 200))
        a = df / 2
        target = rng.uniform(20, 299)  # -log10 p
        lo, hi = a + 1.0, 10.0 * (a + 800.0)
        for _ in range(80):  # bisect for a statistic with the chosen p
            mid = 0.5 * (lo + hi)
            p = float(chdtrc(df, 2 * mid))
            if p > 0.0 and -math.log10(p) < target:
                lo = mid
            else:
                hi = mid
        x = lo
        ref = math.log(chdtrc(df, 2 * x))
        assert _log_gammaincc_cf(a, x) == pytest.approx(ref, rel=1e-12, abs=1e-12)
    # Continuity across the switch to the continued fraction
    grid = np.linspace(1200.0, 1450.0, 2001)
    values = np.array([log10_chi2_sf(float(s), 3) for s in grid])
    assert np.all(np.diff(values) < 0)
    assert np.all(np.isfinite(values))


def test_log10_sf_arguments() -> None:
    assert log10_chi2_sf(0.0, 3) == 0.0
    for statistic, df in [(-1.0, 1), (float("nan"), 1), (float("inf"), 1), (1.0, 0), (1.0, 1.5), (1.0, True)]:
        with pytest.raises(ValueError):
            log10_chi2_sf(statistic, df)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("kwargs", "argument"),
    [
        ({"observed": [10]}, "observed"),
        ({"observed": [0, 0]}, "observed"),
        ({"observed": [10, -1]}, "observed"),
        ({"observed": [10, 2.0]}, "observed"),
        ({"observed": [10, True]}, "observed"),
        ({"observed": "12"}, "observed"),
        ({"observed": 12}, "observed"),
        ({"observed": [10, 2**53 + 1]}, "observed"),
        ({"observed": [10, 10], "expected_weights": [1.0]}, "expected_weights"),
        ({"observed": [10, 10], "expected_weights": [1.0, 0.0]}, "expected_weights"),
        ({"observed": [10, 10], "expected_weights": [1.0, -2.0]}, "expected_weights"),
        ({"observed": [10, 10], "expected_weights": [1.0, float("nan")]}, "expected_weights"),
        ({"observed": [10, 10], "expected_weights": [1.0, float("inf")]}, "expected_weights"),
        ({"observed": [10, 10], "expected_weights": [1.0, "1"]}, "expected_weights"),
        ({"observed": [10, 10], "expected_weights": [1.0, 1e-320]}, "expected_weights"),
        ({"observed": [10, 10], "threshold": 0.0}, "threshold"),
        ({"observed": [10, 10], "threshold": 0.6}, "threshold"),
        ({"observed": [10, 10], "threshold": float("nan")}, "threshold"),
        ({"observed": [10, 10], "threshold": True}, "threshold"),
    ],
)
def test_rejects_bad_arguments(kwargs: dict, argument: str) -> None:
    with pytest.raises(ValueError, match=argument):
        allocation_check(**kwargs)


def test_accepts_numpy_integers_and_is_frozen() -> None:
    result = allocation_check(np.array([120, 80], dtype=np.int64), np.array([0.6, 0.4]))
    assert isinstance(result, AllocationCheck)
    assert result.statistic == pytest.approx(0.0, abs=1e-12)
    assert isinstance(result.arms[0].observed, int)
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.p_value = 0.5  # type: ignore[misc]
