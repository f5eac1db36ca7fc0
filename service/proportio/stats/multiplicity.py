"""Multiplicity adjustments of p-values for many simultaneous comparisons.

A readout of thousands of metrics at once will show some small p-values by chance alone; the
adjustments here turn raw p-values into adjusted ones that can be compared with the usual alpha
while controlling either the family-wise error rate (Bonferroni, Holm, Hochberg) or the false
discovery rate (Benjamini-Hochberg, Benjamini-Yekutieli).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["ADJUSTMENTS", "adjust_p_values", "bonferroni_confidence"]

ADJUSTMENTS = ("none", "bonferroni", "holm", "hochberg", "benjamini-hochberg", "benjamini-yekutieli")


def _validated_p(p: ArrayLike) -> np.ndarray:
    try:
        values = np.asarray(p, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise ValueError("p must be an array of numbers between 0 and 1") from exc
    if np.isnan(values).any():
        raise ValueError("p must not contain NaN")
    if values.size and (values.min() < 0.0 or values.max() > 1.0):
        raise ValueError("p must contain only values between 0 and 1")
    return values


def adjust_p_values(p: ArrayLike, method: str) -> np.ndarray:
    """Adjust p-values for multiple comparisons.

    Parameters
    ----------
    p : array_like of float
        Raw p-values in [0, 1], any shape; NaN is rejected.
    method : str
        One of ``ADJUSTMENTS``:

        - ``"none"``: the p-values unchanged.
        - ``"bonferroni"``: ``min(1, m p_i)``; controls the family-wise error rate.
        - ``"holm"``: step-down; with ``p_(1) <= ... <= p_(m)`` sorted ascending,
          ``p~_(i) = max_{j <= i} min(1, (m - j + 1) p_(j))``. Controls the family-wise
          error rate under any dependence and is never larger than Bonferroni.
        - ``"hochberg"``: step-up; ``p~_(i) = min_{j >= i} min(1, (m - j + 1) p_(j))``. Controls
          the family-wise error rate for independent or positively dependent tests.
        - ``"benjamini-hochberg"``: step-up; ``p~_(i) = min_{j >= i} min(1, m p_(j) / j)``.
          Controls the false discovery rate for independent or positively dependent tests.
        - ``"benjamini-yekutieli"``: as Benjamini-Hochberg with ``m`` replaced by
          ``m * sum_{j=1}^{m} 1/j``; controls the false discovery rate under any dependence.

    Returns
    -------
    numpy.ndarray
        Adjusted p-values (float64) in the input order and shape, each in ``[p_i, 1]``. Rejecting
        every hypothesis whose adjusted p-value is at most ``alpha`` is the same decision as running
        the method's procedure at level ``alpha``.

    Raises
    ------
    ValueError
        If ``method`` is not recognized or ``p`` holds NaN or values outside [0, 1].

    Notes
    -----
    Sorting once and taking a running maximum (step-down) or a running minimum from the largest
    p-value down (step-up) makes every method O(m log m) without Python loops. Ties give equal
    adjusted values whatever order the sort puts them in.

    References
    ----------
    .. [1] Dunn, O. J. (1961). Multiple comparisons among means. Journal of the American
       Statistical Association, 56:52-64.
    .. [2] Holm, S. (1979). A simple sequentially rejective multiple test procedure.
       Scandinavian Journal of Statistics, 6:65-70.
    .. [3] Hochberg, Y. (1988). A sharper Bonferroni procedure for multiple tests of
       significance. Biometrika, 75:800-802.
    .. [4] Benjamini, Y. and Hochberg, Y. (1995). Controlling the false discovery rate: a practical
       and powerful approach to multiple testing. Journal of the Royal Statistical Society,
       Series B, 57:289-300.
    .. [5] Benjamini, Y. and Yekutieli, D. (2001). The control of the false discovery rate in
       multiple testing under dependency. The Annals of Statistics, 29:1165-1188.
    .. [6] Wright, S. P. (1992). Adjusted p-values for simultaneous inference. Biometrics,
       48:1005-1013.
    """
    if not isinstance(method, str) or method not in ADJUSTMENTS:
        raise ValueError(
            f'adjustment "{method}" not recognized; use '
            + ", ".join(ADJUSTMENTS[:-1])
            + f" or {ADJUSTMENTS[-1]}"
        )
    values = _validated_p(p)
    shape = values.shape
    flat = values.ravel()
    m = flat.size
    if method == "none" or m == 0:
        return flat.copy().reshape(shape)
    if method == "bonferroni":
        return np.minimum(flat * m, 1.0).reshape(shape)

    order = np.argsort(flat)
    ordered = flat[order]
    rank = np.arange(1, m + 1, dtype=np.float64)
    if method == "holm":
        adjusted = np.maximum.accumulate((m - rank + 1.0) * ordered)
    elif method == "hochberg":
        adjusted = np.minimum.accumulate(((m - rank + 1.0) * ordered)[::-1])[::-1]
    else:
        # Divide by the ecdf factor j/m (times the harmonic sum for BY) rather than multiply by m/j,
        # so the rounding matches the usual implementations to the last bit in most cases.
        factor = rank / m
        if method == "benjamini-yekutieli":
            factor = factor / np.sum(1.0 / rank)
        adjusted = np.minimum.accumulate((ordered / factor)[::-1])[::-1]
    np.minimum(adjusted, 1.0, out=adjusted)

    result = np.empty_like(adjusted)
    result[order] = adjusted
    return result.reshape(shape)


def bonferroni_confidence(confidence: float, m: int) -> float:
    """Return the per-interval confidence that gives simultaneous coverage over m intervals.

    By the Bonferroni inequality, ``m`` intervals each at level ``1 - (1 - confidence) / m`` all cover
    their targets together with probability at least ``confidence``, whatever their dependence.

    Parameters
    ----------
    confidence : float
        Desired simultaneous (family-wise) coverage, in (0, 1).
    m : int
        Number of intervals, at least 1.

    Returns
    -------
    float
        ``1 - (1 - confidence) / m``.

    Raises
    ------
    ValueError
        If ``confidence`` is not in (0, 1) or ``m`` is not a positive integer.

    References
    ----------
    .. [1] Dunn, O. J. (1961). Multiple comparisons among means. Journal of the American
       Statistical Association, 56:52-64.
    """
    if isinstance(confidence, bool) or not isinstance(confidence, (int, float, np.integer, np.floating)):
        raise ValueError("confidence must be a number in (0, 1)")
    if not 0.0 < float(confidence) < 1.0:
        raise ValueError("confidence must be in (0, 1)")
    if isinstance(m, bool) or not isinstance(m, (int, np.integer)) or m < 1:
        raise ValueError("m must be a positive integer")
    return 1.0 - (1.0 - float(confidence)) / int(m)
