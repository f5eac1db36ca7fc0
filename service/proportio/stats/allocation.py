"""Sample-ratio mismatch: does the observed traffic split match the planned allocation?

When the units assigned to each arm differ from the planned split by more than chance allows, the
assignment or logging is broken somewhere, and every other comparison in the experiment is suspect.
The check is Pearson's chi-square goodness-of-fit test of the observed arm counts against the
planned shares.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.special import chdtrc, gammaln

__all__ = ["AllocationCheck", "ArmAllocation", "allocation_check", "log10_chi2_sf"]

# Counts above 2**53 are not exactly representable in float64.
_MAX_COUNT = 2**53
# Below this, chdtrc is near the subnormal range and its relative accuracy degrades; the continued
# fraction in log space takes over there.
_DIRECT_P_FLOOR = 1e-280
_FPMIN = 1e-300
_CF_EPS = 1e-16
_CF_MAX_ITER = 100_000
_MIN_EXPECTED = 5.0


def _log_gammaincc_cf(a: float, x: float) -> float:
    """Return log Q(a, x), the regularized upper incomplete gamma function, for x > a + 1.

    Modified Lentz evaluation of Legendre's continued fraction; the prefactor x^a e^(-x) / Gamma(a)
    is kept in log space so that nothing underflows however small Q is.
    """
    b = x + 1.0 - a
    c = 1.0 / _FPMIN
    d = 1.0 / b
    h = d
    for i in range(1, _CF_MAX_ITER):
        an = -i * (i - a)
        b += 2.0
        d = an * d + b
        if abs(d) < _FPMIN:
            d = _FPMIN
        c = b + an / c
        if abs(c) < _FPMIN:
            c = _FPMIN
        d = 1.0 / d
        delta = d * c
        h *= delta
        if abs(delta - 1.0) < _CF_EPS:
            break
    return a * math.log(x) - x - float(gammaln(a)) + math.log(h)


def log10_chi2_sf(statistic: float, df: int) -> float:
    """Return log10 of the chi-square survival function, finite even where the p-value underflows.

    Parameters
    ----------
    statistic : float
        A finite, non-negative chi-square statistic.
    df : int
        Degrees of freedom, at least 1.

    Returns
    -------
    float
        ``log10 P(X >= statistic)`` for ``X ~ chi-square(df)``; 0.0 when the statistic is 0.

    Notes
    -----
    While the p-value is comfortably representable, its log is taken directly from
    ``scipy.special.chdtrc``. Below about 1e-280 the p-value is computed as the regularized upper
    incomplete gamma function ``Q(df/2, statistic/2)`` from its continued fraction, with the
    prefactor in log space, which stays accurate for statistics as large as float64 allows.

    References
    ----------
    .. [1] Press, W. H., Teukolsky, S. A., Vetterling, W. T. and Flannery, B. P. (2007). Numerical
       Recipes: The Art of Scientific Computing, 3rd edition, Section 6.2. Cambridge University Press.
    .. [2] Lentz, W. J. (1976). Generating Bessel functions in Mie scattering calculations using
       continued fractions. Applied Optics, 15:668-671.
    """
    if not math.isfinite(statistic) or statistic < 0.0:
        raise ValueError("statistic must be a finite, non-negative number")
    if isinstance(df, bool) or not isinstance(df, (int, np.integer)) or df < 1:
        raise ValueError("df must be a positive integer")
    if statistic == 0.0:
        return 0.0
    p = float(chdtrc(df, statistic))
    a = 0.5 * df
    x = 0.5 * statistic
    if p >= _DIRECT_P_FLOOR or x <= a + 1.0:
        # x <= a + 1 cannot give a p-value this small; the guard only keeps the fraction in range.
        return math.log10(p)
    return _log_gammaincc_cf(a, x) / math.log(10.0)


@dataclass(frozen=True, slots=True)
class ArmAllocation:
    """Observed and planned traffic of one arm.

    Attributes
    ----------
    observed : int
        Units observed in the arm.
    expected : float
        Units expected under the planned split: ``expected_share * total``.
    observed_share : float
        ``observed / total``.
    expected_share : float
        Planned share (the normalized weight).
    standardized_residual : float
        Pearson residual ``(observed - expected) / sqrt(expected)``; its squares sum to the statistic.
    """

    observed: int
    expected: float
    observed_share: float
    expected_share: float
    standardized_residual: float


@dataclass(frozen=True, slots=True)
class AllocationCheck:
    """Result of a sample-ratio-mismatch check.

    Attributes
    ----------
    statistic : float
        Pearson's chi-square goodness-of-fit statistic.
    p_value : float
        Upper-tail chi-square p-value; may underflow to 0.0 for huge imbalances (see
        ``log10_p_value``).
    df : int
        Degrees of freedom, number of arms minus 1.
    threshold : float
        The p-value below which a mismatch is declared.
    mismatch : bool
        ``p_value < threshold``.
    arms : tuple of ArmAllocation
        Per-arm detail, in the input order.
    log10_p_value : float
        log10 of the p-value, finite even when ``p_value`` underflows.
    summary : str
        One plain sentence.
    warnings : tuple of str
        Cautions, e.g. expected counts too small for the chi-square approximation.
    """

    statistic: float
    p_value: float
    df: int
    threshold: float
    mismatch: bool
    arms: tuple[ArmAllocation, ...]
    log10_p_value: float
    summary: str
    warnings: tuple[str, ...]


def _validated_counts(observed: Sequence[int]) -> list[int]:
    if isinstance(observed, (str, bytes)):
        raise ValueError("observed must be a sequence of integer counts")
    try:
        values = list(observed)
    except TypeError as exc:
        raise ValueError("observed must be a sequence of integer counts") from exc
    for value in values:
        if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
            raise ValueError("observed must contain only integers")
        if value < 0:
            raise ValueError("observed must contain only non-negative counts")
        if value > _MAX_COUNT:
            raise ValueError("observed counts must be at most 2**53")
    if len(values) < 2:
        raise ValueError("observed must have at least 2 arms")
    counts = [int(v) for v in values]
    if sum(counts) < 1:
        raise ValueError("observed must have a total of at least 1")
    if sum(counts) > _MAX_COUNT:
        raise ValueError("observed must have a total of at most 2**53")
    return counts


def _validated_shares(expected_weights: Sequence[float] | None, k: int) -> np.ndarray:
    if expected_weights is None:
        return np.full(k, 1.0 / k)
    if isinstance(expected_weights, (str, bytes)):
        raise ValueError("expected_weights must be a sequence of positive numbers")
    try:
        values = list(expected_weights)
    except TypeError as exc:
        raise ValueError("expected_weights must be a sequence of positive numbers") from exc
    for value in values:
        if isinstance(value, (bool, np.bool_)) or not isinstance(
            value, (int, float, np.integer, np.floating)
        ):
            raise ValueError("expected_weights must contain only numbers")
    if len(values) != k:
        raise ValueError(f"expected_weights must have one weight per arm ({k}), got {len(values)}")
    weights = np.asarray(values, dtype=np.float64)
    if not np.all(np.isfinite(weights)) or np.any(weights <= 0.0):
        raise ValueError("expected_weights must be positive and finite")
    total = float(np.sum(weights))
    if not math.isfinite(total):
        raise ValueError("expected_weights are too large to normalize")
    return weights / total


def _format_p(p_value: float, log10_p_value: float) -> str:
    if p_value < 1e-300:
        return f"p < 1e-300 (log10 p = {log10_p_value:.4g})"
    if p_value < 0.001:
        return f"p = {p_value:.2e}"
    return f"p = {p_value:.3f}"


def allocation_check(
    observed: Sequence[int],
    expected_weights: Sequence[float] | None = None,
    threshold: float = 0.001,
) -> AllocationCheck:
    """Check whether observed arm counts match the planned traffic split (sample-ratio mismatch).

    Parameters
    ----------
    observed : sequence of int
        Units observed in each arm, non-negative integers; at least 2 arms and a total of at least 1.
    expected_weights : sequence of float, optional
        Planned relative weights of the arms, positive; they are normalized to shares. Default:
        an equal split.
    threshold : float, default 0.001
        A mismatch is declared when the p-value is below this, in (0, 0.5]. The strict default of
        0.001 is common practice in online experimentation (no published source): the check runs on
        every experiment, and a false alarm halts an otherwise sound readout.

    Returns
    -------
    AllocationCheck

    Raises
    ------
    ValueError
        On bad counts, weights or threshold; the message names the argument.

    Notes
    -----
    The statistic is ``sum_i (O_i - E_i)^2 / E_i`` with ``E_i = w_i N``, referred to a chi-square
    distribution with ``k - 1`` degrees of freedom. When an expected count is below 5 (common
    practice, no published source) a warning says the approximation may be poor; for two arms it
    adds the exact binomial p-value. Arms are numbered from 1 in the order given.

    References
    ----------
    .. [1] Pearson, K. (1900). On the criterion that a given system of deviations from the probable
       in the case of a correlated system of variables is such that it can be reasonably supposed
       to have arisen from random sampling. Philosophical Magazine, Series 5, 50:157-175.
    """
    counts = _validated_counts(observed)
    k = len(counts)
    shares = _validated_shares(expected_weights, k)
    if isinstance(threshold, (bool, np.bool_)) or not isinstance(
        threshold, (int, float, np.integer, np.floating)
    ):
        raise ValueError("threshold must be a number in (0, 0.5]")
    threshold = float(threshold)
    if not 0.0 < threshold <= 0.5:
        raise ValueError("threshold must be in (0, 0.5]")

    total = sum(counts)
    obs = np.asarray(counts, dtype=np.float64)
    expected = shares * total
    if np.any(expected <= 0.0):
        raise ValueError("expected_weights are too unequal: an expected count underflows to 0")
    deviation = obs - expected
    # A weight many orders of magnitude below the others can overflow the statistic; that is
    # reported as a bad argument below rather than as a floating-point warning.
    with np.errstate(over="ignore"):
        statistic = float(np.sum(deviation**2 / expected))
        residuals = deviation / np.sqrt(expected)
    if not math.isfinite(statistic):
        raise ValueError("expected_weights are too unequal: the chi-square statistic overflows")
    df = k - 1
    p_value = float(chdtrc(df, statistic))
    log10_p = log10_chi2_sf(statistic, df)
    mismatch = p_value < threshold

    arms = tuple(
        ArmAllocation(
            observed=counts[i],
            expected=float(expected[i]),
            observed_share=counts[i] / total,
            expected_share=float(shares[i]),
            standardized_residual=float(residuals[i]),
        )
        for i in range(k)
    )

    warnings: list[str] = []
    small = [i for i in range(k) if expected[i] < _MIN_EXPECTED]
    if small:
        arm_list = ", ".join(str(i + 1) for i in small)
        message = (
            f"expected count below {_MIN_EXPECTED:g} in arm(s) {arm_list} (smallest "
            f"{float(np.min(expected)):.3g}); the chi-square approximation may be poor"
        )
        if k == 2:
            # Imported here: scipy.stats is slow to import and only this rare path needs it.
            from scipy.stats import binomtest

            exact = binomtest(counts[0], total, float(shares[0])).pvalue
            message += f"; the exact binomial test gives p = {exact:.3g}"
        warnings.append(message)

    p_text = _format_p(p_value, log10_p)
    if mismatch:
        worst = int(np.argmax(np.abs(residuals)))
        summary = (
            f"The traffic split differs from the plan: arm {worst + 1} received "
            f"{100 * arms[worst].observed_share:.2f}% of the {total:,} units against "
            f"{100 * arms[worst].expected_share:.2f}% planned (chi-square = {statistic:.4g}, df = {df}, "
            f"{p_text}, below the threshold of {threshold:g}), so the experiment's other results should "
            "not be trusted until the cause of the mismatch is found."
        )
    else:
        summary = (
            f"The split of {total:,} units across {k} arms is consistent with the plan "
            f"(chi-square = {statistic:.4g}, df = {df}, {p_text}, threshold {threshold:g})."
        )

    return AllocationCheck(
        statistic=statistic,
        p_value=p_value,
        df=df,
        threshold=threshold,
        mismatch=mismatch,
        arms=arms,
        log10_p_value=log10_p,
        summary=summary,
        warnings=tuple(warnings),
    )
