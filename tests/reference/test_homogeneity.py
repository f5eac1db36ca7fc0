"""Reference tests for the chi-square test of homogeneity (proportio.stats.homogeneity)."""

from __future__ import annotations

import dataclasses
import math
from fractions import Fraction

import numpy as np
import pytest
from scipy.special import chdtrc, log_ndtr
from scipy.stats import chi2_contingency
from statsmodels.stats.proportion import proportions_ztest

from proportio.stats.homogeneity import HomogeneityResult, homogeneity_test

LN10 = math.log(10.0)


def _exact_statistic(successes: list[int], trials: list[int]) -> float:
    """Pearson's statistic on the k x 2 table from its definition, in exact rational arithmetic."""
    total_s, total_n = sum(successes), sum(trials)
    stat = Fraction(0)
    for x, n in zip(successes, trials, strict=True):
        for observed, column_total in ((x, total_s), (n - x, total_n - total_s)):
            expected = Fraction(n * column_total, total_n)
            stat += (observed - expected) ** 2 / expected
    return float(stat)


def test_matches_scipy_chi2_contingency_on_random_tables() -> None:
    rng = np.random.default_rng(8675309)
    checked = 0
    for trial in range(1500):
        k = int(rng.integers(2, 9))
        trials = rng.integers(1, int(10 ** rng.uniform(1, 5)) + 2, size=k)
        base = rng.uniform(0.001, 0.999)
        rates = np.clip(base * rng.uniform(0.7, 1.4, size=k), 0.0, 1.0) if trial % 2 else np.full(k, base)
        successes = rng.binomial(trials, rates)
        table = np.column_stack([successes, trials - successes])
        if table[:, 0].sum() == 0 or table[:, 1].sum() == 0:
            continue  # scipy raises on an empty column; covered by test_no_variation below
        result = homogeneity_test(successes.tolist(), trials.tolist())
        # scipy.stats.chi2_contingency, Pearson statistic without Yates' correction
        ref = chi2_contingency(table, correction=False)
        assert result.statistic == pytest.approx(ref.statistic, rel=1e-10, abs=1e-10)
        assert result.p_value == pytest.approx(ref.pvalue, rel=1e-10, abs=1e-300)
        assert result.df == ref.dof == k - 1
        assert result.min_expected_count == pytest.approx(float(ref.expected_freq.min()), rel=1e-12)
        if ref.pvalue > 1e-280:
            assert result.log10_p_value == pytest.approx(math.log10(ref.pvalue), rel=1e-10, abs=1e-10)
        assert (result.min_expected_count < 5) == any(
            "approximation may be poor" in w for w in result.warnings
        )
        checked += 1
    assert checked > 1400


def test_two_groups_equal_the_squared_pooled_z() -> None:
    rng = np.random.default_rng(12)
    for _ in range(500):
        trials = rng.integers(2, 100_000, size=2)
        successes = rng.binomial(trials, rng.uniform(0.02, 0.98))
        if successes.sum() in (0, trials.sum()):
            continue
        result = homogeneity_test(successes.tolist(), trials.tolist())
        # statsmodels 0.15 function stats.proportion.proportions_ztest (pooled variance)
        z, p = proportions_ztest(successes, trials)
        assert result.statistic == pytest.approx(z**2, rel=1e-10, abs=1e-12)
        # The two-sided z p-value equals the chi-square(1) upper tail of z^2.
        assert result.p_value == pytest.approx(p, rel=1e-9, abs=1e-300)


def test_no_variation_gives_statistic_zero_and_p_one() -> None:
    for successes, trials in (([0, 0, 0], [10, 2000, 7]), ([10, 2000, 7], [10, 2000, 7])):
        result = homogeneity_test(successes, trials)
        assert result.statistic == 0.0 and result.p_value == 1.0 and result.log10_p_value == 0.0
        assert result.min_expected_count == 0.0
        assert len(result.warnings) == 1 and "rates are identical" in result.warnings[0]
        # scipy.stats.chi2_contingency raises here (an expected frequency is zero), which is why
        # the limit (statistic 0, p-value 1) is defined and tested on its own.
        table = np.column_stack([successes, np.subtract(trials, successes)])
        with pytest.raises(ValueError):
            chi2_contingency(table, correction=False)


def test_hand_example() -> None:
    # Hand computation: successes 10, 20, 30 of 100 each; pooled rate 0.2, expected successes 20
    # and failures 80 per group; statistic = (100 + 0 + 100) / 20 + (100 + 0 + 100) / 80 = 12.5.
    result = homogeneity_test([10, 20, 30], [100, 100, 100])
    assert result.statistic == pytest.approx(12.5, rel=1e-14)
    assert result.df == 2
    # For 2 df the survival function is exp(-s/2) (closed form).
    assert result.p_value == pytest.approx(math.exp(-6.25), rel=1e-13)
    assert result.log10_p_value == pytest.approx(-6.25 / LN10, rel=1e-13)
    assert result.min_expected_count == pytest.approx(20.0, rel=1e-15)
    assert result.warnings == ()


def test_counts_up_to_a_trillion_match_exact_arithmetic() -> None:
    t = 10**12
    cases = [
        ([500_000_123, 500_001_999], [t, t]),  # nearly identical rates at 10^12 trials
        ([123_456_789_012, 123_456_000_000, 123_457_111_111], [t, t, t - 5]),
        ([1, 0], [t, t]),  # tiny expected counts at huge trials
        ([t // 2, t // 2 + 1_000_000], [t, t]),
        ([999_999_999_999, 3], [t, 7]),
    ]
    for successes, trials in cases:
        result = homogeneity_test(successes, trials)
        exact = _exact_statistic(successes, trials)
        assert result.statistic == pytest.approx(exact, rel=1e-12, abs=1e-15)
        # scipy.special.chdtrc (chi-square survival function)
        assert result.p_value == pytest.approx(float(chdtrc(len(trials) - 1, exact)), rel=1e-10, abs=1e-300)
        for value in (result.statistic, result.p_value, result.log10_p_value, result.min_expected_count):
            assert math.isfinite(value)


def test_huge_difference_has_a_finite_log_p() -> None:
    t = 10**12
    result = homogeneity_test([t // 10, t // 2], [t, t])
    assert result.statistic == pytest.approx(_exact_statistic([t // 10, t // 2], [t, t]), rel=1e-12)
    assert 0.0 <= result.p_value < 1e-300
    # chi-square(1) is a squared standard normal: log P = log 2 + log Phi(-sqrt(s)) (scipy.special.log_ndtr)
    ref = (math.log(2.0) + float(log_ndtr(-math.sqrt(result.statistic)))) / LN10
    assert result.log10_p_value == pytest.approx(ref, rel=1e-12)
    assert math.isfinite(result.log10_p_value)


def test_small_expected_counts_warn() -> None:
    # Common practice, no published source: warn below an expected count of 5.
    result = homogeneity_test([1, 3], [10, 10])
    assert result.min_expected_count == pytest.approx(2.0, rel=1e-15)
    assert len(result.warnings) == 1 and "approximation may be poor" in result.warnings[0]


@pytest.mark.parametrize(
    ("successes", "trials", "argument"),
    [
        ([1], [10], "groups"),
        ([1, 2], [10], "same length"),
        ([1, 11], [10, 10], r"successes\[1\]"),
        ([1, 2], [10, 0], r"trials\[1\]"),
        ([1, -2], [10, 10], "successes"),
        ([1, 2.0], [10, 10], "successes"),
        ([1, 2], [10, True], "trials"),
        ("12", [10, 10], "successes"),
        ([1, 2], None, "trials"),
        ([1, 2], [10, 2**53 + 1], "trials"),
    ],
)
def test_rejects_bad_arguments(successes, trials, argument: str) -> None:
    with pytest.raises(ValueError, match=argument):
        homogeneity_test(successes, trials)


def test_accepts_numpy_integers_and_is_frozen() -> None:
    result = homogeneity_test(np.array([5, 9], dtype=np.int64), np.array([50, 60], dtype=np.int32))
    assert isinstance(result, HomogeneityResult)
    assert result.statistic == pytest.approx(_exact_statistic([5, 9], [50, 60]), rel=1e-12)
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.p_value = 0.5  # type: ignore[misc]
