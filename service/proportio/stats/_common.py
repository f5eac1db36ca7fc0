"""Shared checks and normal-distribution helpers for the statistics core."""

from __future__ import annotations

import math
from collections.abc import Sequence
from functools import lru_cache

import numpy as np
from scipy import special

ALTERNATIVES = ("two-sided", "greater", "less")
MAX_TRIALS = 10**12
LOG10_E = math.log10(math.e)


def check_alternative(alternative: str) -> str:
    """Return ``alternative`` if it is one of the three known ones, else raise ValueError."""
    if alternative not in ALTERNATIVES:
        raise ValueError(f'alternative "{alternative}" not recognized; use two-sided, greater or less')
    return alternative


def check_alpha(alpha: float) -> float:
    """Return ``alpha`` as float if it lies in (0, 0.5]."""
    alpha = float(alpha)
    if not (0.0 < alpha <= 0.5):
        raise ValueError(f"alpha must be in (0, 0.5], got {alpha}")
    return alpha


def check_confidence(confidence: float) -> float:
    """Return ``confidence`` as float if it lies in (0, 1)."""
    confidence = float(confidence)
    if not (0.0 < confidence < 1.0):
        raise ValueError(f"confidence must be in (0, 1), got {confidence}")
    return confidence


def check_method(method: str, known: Sequence[str], what: str = "method") -> str:
    """Raise a ValueError naming the known choices when ``method`` is not one of them."""
    if method not in known:
        raise ValueError(f'{what} "{method}" not recognized; use one of: {", ".join(known)}')
    return method


def as_counts(successes, trials, name: str = "group") -> tuple[np.ndarray, np.ndarray]:
    """Validate success/trial counts and return them as 1-d float64 arrays.

    Counts must be integers (booleans are refused) with ``0 <= successes <= trials`` and
    ``1 <= trials <= 10**12``; float64 holds every such integer exactly.
    """
    xs = np.atleast_1d(np.asarray(successes))
    ns = np.atleast_1d(np.asarray(trials))
    for arr, part in ((xs, "successes"), (ns, "trials")):
        # dtype kinds: i/u integers, f floats; booleans (b) and objects (O) are refused.
        if arr.dtype.kind not in "iu" and not (arr.dtype.kind == "f" and _integral_floats(arr)):
            raise ValueError(f"{name}.{part} must be whole numbers")
    if xs.shape != ns.shape:
        raise ValueError(f"{name}.successes and {name}.trials must have the same length")
    x = xs.astype(np.float64)
    n = ns.astype(np.float64)
    # One pass for the usual case (every count valid); the messages below say which rule failed.
    if ((n >= 1) & (n <= MAX_TRIALS) & (x >= 0) & (x <= n)).all():
        return x, n
    if np.any(n < 1) or np.any(n > MAX_TRIALS):
        raise ValueError(f"{name}.trials must be between 1 and 10**12")
    if np.any(x < 0):
        raise ValueError(f"{name}.successes must not be negative")
    if np.any(x > n):
        raise ValueError(f"{name}.successes must not exceed {name}.trials")
    return x, n


def _integral_floats(arr: np.ndarray) -> bool:
    return bool(np.issubdtype(arr.dtype, np.floating) and np.all(np.isfinite(arr)) and np.all(arr == np.round(arr)))


def rate_difference(x1, n1, x2, n2):
    """Return ``x1/n1 - x2/n2`` computed from whichever of successes or failures are fewer.

    ``twogroup._one_values`` repeats this with floats: change both.

    Two rates near 1 differ by less than their rounding error allows (1 - 1e-11 is stored to about
    1e-16 absolute, which is 1e-5 of a difference of 1e-11); the failure rates carry the same difference
    with full relative precision.
    """
    failures_fewer = (x1 + x2) > 0.5 * (n1 + n2)
    return np.where(failures_fewer, (n2 - x2) / n2 - (n1 - x1) / n1, x1 / n1 - x2 / n2)


def z_two_sided(confidence: float) -> float:
    """Return the standard normal quantile leaving (1 - confidence)/2 in each tail."""
    return float(special.ndtri(0.5 + confidence / 2.0))


@lru_cache(maxsize=64)
def z_one_sided(confidence: float) -> float:
    """Return the standard normal quantile leaving 1 - confidence in the upper tail (cached: a few levels recur)."""
    return float(special.ndtri(confidence))


def normal_p_value(z: np.ndarray, alternative: str) -> tuple[np.ndarray, np.ndarray]:
    """Return (p, log10 p) for standard normal statistics ``z``.

    The log is computed from ``log_ndtr`` so it stays finite where ``p`` itself underflows
    (|z| beyond about 38). NaN statistics give NaN in both.
    """
    z = np.asarray(z, dtype=np.float64)
    if alternative == "greater":
        log_p = special.log_ndtr(-z)
    elif alternative == "less":
        log_p = special.log_ndtr(z)
    else:
        log_p = np.minimum(math.log(2.0) + special.log_ndtr(-np.abs(z)), 0.0)
    return np.exp(log_p), log_p * LOG10_E


def normal_p_value_float(z: float, alternative: str) -> tuple[float, float]:
    """:func:`normal_p_value` of one float, to the last bit, with two ufunc calls instead of several array ops.

    The same scipy/numpy functions on the same values (``-abs`` and ``min`` with 0 are exact, as are the
    array versions); the float path of one comparison (``twogroup._one_values``) uses it.
    """
    if alternative == "greater":
        log_p = float(special.log_ndtr(-z))
    elif alternative == "less":
        log_p = float(special.log_ndtr(z))
    else:
        log_p = math.log(2.0) + float(special.log_ndtr(-abs(z)))
        # np.minimum(log_p, 0.0), NaN included.
        log_p = log_p if log_p <= 0.0 or log_p != log_p else 0.0
    return float(np.exp(log_p)), log_p * LOG10_E


def chi2_1df_p_value(stat: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (p, log10 p) of a chi-square statistic on one degree of freedom."""
    stat = np.asarray(stat, dtype=np.float64)
    # P(chi2_1 > s) = P(|Z| > sqrt(s)): reuse the normal tail for an underflow-free log.
    return normal_p_value(np.sqrt(np.maximum(stat, 0.0)), "two-sided")


def bisect_decreasing(f, lo: np.ndarray, hi: np.ndarray, iterations: int = 64) -> np.ndarray:
    """Find, elementwise, the point where a decreasing ``f`` crosses zero in ``[lo, hi]``.

    ``f(lo) >= 0 >= f(hi)`` is assumed. 64 halvings shrink any bracket of width up to 2**10 below
    float64 resolution, so the answer is as exact as ``f`` itself.
    """
    lo = np.array(lo, dtype=np.float64, copy=True)
    hi = np.array(hi, dtype=np.float64, copy=True)
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        with np.errstate(invalid="ignore"):
            positive = f(mid) >= 0.0
        lo = np.where(positive, mid, lo)
        hi = np.where(positive, hi, mid)
    return 0.5 * (lo + hi)


def solve_decreasing(f, lo: np.ndarray, hi: np.ndarray, halvings: int = 6, iterations: int = 100) -> np.ndarray:
    """Find, elementwise, where a decreasing function crosses zero in ``[lo, hi]``, fast.

    ``f(x, idx)`` evaluates the function of elements ``idx`` at ``x`` (so that work shrinks to the
    elements not yet converged). ``f(lo) >= 0 >= f(hi)`` is assumed; either end may be infinite there.
    A few halvings move both ends inside the interval (where ``f`` is finite), then the Illinois variant
    of false position (Dowell & Jarratt 1971, BIT 11:168-174) converges superlinearly; a step that would
    not land strictly inside the bracket falls back to halving. An element stops once its bracket is
    within a few units in the last place, typically after 10-20 evaluations instead of bisection's 64.
    """
    lo = np.array(lo, dtype=np.float64, copy=True).ravel()
    hi = np.array(hi, dtype=np.float64, copy=True).ravel()
    every = np.arange(lo.size)
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        for _ in range(halvings):
            mid = 0.5 * (lo + hi)
            positive = f(mid, every) >= 0.0
            lo = np.where(positive, mid, lo)
            hi = np.where(positive, hi, mid)
        f_lo = f(lo, every)
        f_hi = f(hi, every)
        side = np.zeros(lo.shape)
        idx = every
        for _ in range(iterations):
            a, b, fa, fb = lo[idx], hi[idx], f_lo[idx], f_hi[idx]
            width = b - a
            keep = width > 4.0 * np.spacing(np.maximum(np.abs(a), np.abs(b)))
            idx, a, b, fa, fb, width = idx[keep], a[keep], b[keep], fa[keep], fb[keep], width[keep]
            if idx.size == 0:
                break
            usable = np.isfinite(fa) & np.isfinite(fb) & (fa > fb)
            guess = a + width * fa / np.where(usable, fa - fb, 1.0)
            x = np.where(usable & (guess > a) & (guess < b), guess, 0.5 * (a + b))
            fx = f(x, idx)
            positive = fx >= 0.0
            exact = fx == 0.0
            last = side[idx]
            # Illinois: when the same end moves twice running, halve the value kept at the other end.
            f_hi[idx] = np.where(positive, np.where(last > 0, 0.5 * fb, fb), fx)
            f_lo[idx] = np.where(positive, fx, np.where(last < 0, 0.5 * fa, fa))
            lo[idx] = np.where(positive | exact, x, a)
            hi[idx] = np.where(positive & ~exact, b, x)
            side[idx] = np.where(positive, 1.0, -1.0)
    return 0.5 * (lo + hi)


def percent(p: float, digits: int = 1) -> str:
    """Format a rate in [0, 1] as a percentage string."""
    return f"{100.0 * p:.{digits}f}%"


def significant_digits(x: float, digits: int = 3) -> str:
    """Format a number with a few significant digits, without scientific notation for moderate values."""
    if x == 0 or not math.isfinite(x):
        return f"{x:g}"
    magnitude = math.floor(math.log10(abs(x)))
    if -5 <= magnitude < 9:
        decimals = max(digits - 1 - magnitude, 0)
        return f"{x:,.{decimals}f}"
    return f"{x:.{digits - 1}e}"
