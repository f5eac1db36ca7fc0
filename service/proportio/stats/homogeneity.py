"""Omnibus chi-square test that several groups share one success rate."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.special import chdtrc

from proportio.stats.allocation import log10_chi2_sf

__all__ = ["HomogeneityResult", "homogeneity_test"]

# Counts above 2**53 are not exactly representable in float64.
_MAX_COUNT = 2**53
_MIN_EXPECTED = 5.0


@dataclass(frozen=True, slots=True)
class HomogeneityResult:
    """Result of the chi-square test of homogeneity of k success rates.

    Attributes
    ----------
    statistic : float
        Pearson's chi-square statistic on the k x 2 table of successes and failures.
    p_value : float
        Upper-tail chi-square p-value; may underflow to 0.0 (see ``log10_p_value``).
    df : int
        Degrees of freedom, k - 1.
    log10_p_value : float
        log10 of the p-value, finite even when ``p_value`` underflows.
    min_expected_count : float
        Smallest expected cell count of the table under the null hypothesis.
    warnings : tuple of str
        Cautions, e.g. expected counts too small for the chi-square approximation.
    """

    statistic: float
    p_value: float
    df: int
    log10_p_value: float
    min_expected_count: float
    warnings: tuple[str, ...]


def _validated_counts(values: Sequence[int], name: str) -> list[int]:
    if isinstance(values, (str, bytes)):
        raise ValueError(f"{name} must be a sequence of integer counts")
    try:
        items = list(values)
    except TypeError as exc:
        raise ValueError(f"{name} must be a sequence of integer counts") from exc
    for value in items:
        if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
            raise ValueError(f"{name} must contain only integers")
        if value < 0:
            raise ValueError(f"{name} must contain only non-negative counts")
        if value > _MAX_COUNT:
            raise ValueError(f"{name} must contain counts of at most 2**53")
    return [int(v) for v in items]


def homogeneity_test(successes: Sequence[int], trials: Sequence[int]) -> HomogeneityResult:
    """Test whether k groups share the same success rate (chi-square test of homogeneity).

    Parameters
    ----------
    successes : sequence of int
        Successes in each group, ``0 <= successes[i] <= trials[i]``.
    trials : sequence of int
        Trials in each group, at least 1 each; at least 2 groups.

    Returns
    -------
    HomogeneityResult

    Raises
    ------
    ValueError
        On bad counts; the message names the argument.

    Notes
    -----
    With pooled rate ``p = S / N``, the expected successes of group i are ``E_i = n_i p`` and
    expected failures ``F_i = n_i (1 - p)``; the statistic, without continuity correction, is
    ``sum_i d_i^2 (1 / E_i + 1 / F_i)`` with ``d_i = x_i - n_i p``, referred to a chi-square with
    ``k - 1`` degrees of freedom. For k = 2 it is the square of the pooled two-sample z statistic.
    The deviations ``d_i`` are formed exactly in integer arithmetic, so the statistic stays
    accurate with 10^12 trials per group even when it is small.

    When every group has 0 successes, or every trial is a success, the table has an empty column,
    the rates are identical and the statistic is taken as 0 with p-value 1 (its limit), with a
    warning. A warning is also given when an expected count is below 5 (common practice, no
    published source).

    References
    ----------
    .. [1] Pearson, K. (1900). On the criterion that a given system of deviations from the probable
       in the case of a correlated system of variables is such that it can be reasonably supposed
       to have arisen from random sampling. Philosophical Magazine, Series 5, 50:157-175.
    .. [2] Fisher, R. A. (1922). On the interpretation of chi-square from contingency tables, and
       the calculation of P. Journal of the Royal Statistical Society, 85:87-94.
    """
    x = _validated_counts(successes, "successes")
    n = _validated_counts(trials, "trials")
    if len(x) != len(n):
        raise ValueError(f"successes and trials must have the same length, got {len(x)} and {len(n)}")
    k = len(n)
    if k < 2:
        raise ValueError("trials must describe at least 2 groups")
    for i in range(k):
        if n[i] < 1:
            raise ValueError(f"trials[{i}] must be at least 1")
        if x[i] > n[i]:
            raise ValueError(f"successes[{i}] must not exceed trials[{i}]")
    total_s = sum(x)
    total_n = sum(n)
    if total_n > _MAX_COUNT:
        raise ValueError("trials must have a total of at most 2**53")
    df = k - 1

    # Python int / int is correctly rounded, so each expected count carries one rounding only.
    expected_s = np.array([ni * total_s / total_n for ni in n])
    expected_f = np.array([ni * (total_n - total_s) / total_n for ni in n])
    min_expected = float(min(expected_s.min(), expected_f.min()))

    warnings: list[str] = []
    if total_s == 0 or total_s == total_n:
        kind = "0 successes" if total_s == 0 else "only successes"
        warnings.append(
            f"every group has {kind}, so the rates are identical; the statistic is 0 and the p-value 1"
        )
        return HomogeneityResult(
            statistic=0.0,
            p_value=1.0,
            df=df,
            log10_p_value=0.0,
            min_expected_count=min_expected,
            warnings=tuple(warnings),
        )

    # Exact integer numerators avoid the cancellation of x_i - n_i p when counts reach 10^12.
    deviation = np.array([(xi * total_n - ni * total_s) / total_n for xi, ni in zip(x, n, strict=True)])
    statistic = float(np.sum(deviation**2 / expected_s + deviation**2 / expected_f))
    p_value = float(chdtrc(df, statistic))
    log10_p = log10_chi2_sf(statistic, df)
    if not (math.isfinite(statistic) and math.isfinite(log10_p)):
        raise ValueError("successes and trials give a chi-square statistic that cannot be evaluated")

    if min_expected < _MIN_EXPECTED:
        warnings.append(
            f"smallest expected count is {min_expected:.3g}, below {_MIN_EXPECTED:g}; the chi-square "
            "approximation may be poor"
        )
    return HomogeneityResult(
        statistic=statistic,
        p_value=p_value,
        df=df,
        log10_p_value=log10_p,
        min_expected_count=min_expected,
        warnings=tuple(warnings),
    )
