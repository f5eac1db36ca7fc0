"""Confidence intervals for one proportion and for the difference, ratio and odds ratio of two.

Every function is vectorised over its count arrays and takes the normal critical values of the two
sides separately (``z_lower``, ``z_upper``) so that one code path serves two-sided intervals and the
one-sided bounds that match one-sided tests; ``np.inf`` leaves a side open. Unbounded limits come back
as ``inf`` (ratios) and are turned into ``None`` by :func:`interval`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from . import score
from ._common import as_counts, check_confidence, check_method, rate_difference, z_two_sided

PROPORTION_METHODS = ("wilson", "wilson-cc", "clopper-pearson", "jeffreys", "agresti-coull", "wald")
DIFFERENCE_METHODS = ("newcombe", "miettinen-nurminen", "farrington-manning", "agresti-caffo", "wald", "wald-cc")
RATIO_METHODS = ("miettinen-nurminen", "farrington-manning", "katz-log")
ODDS_RATIO_METHODS = ("miettinen-nurminen", "farrington-manning", "woolf", "conditional-exact")
METHODS = {
    "proportion": PROPORTION_METHODS,
    "difference": DIFFERENCE_METHODS,
    "ratio": RATIO_METHODS,
    "odds-ratio": ODDS_RATIO_METHODS,
}
DEFAULT_METHOD = {
    "proportion": "wilson",
    "difference": "newcombe",
    "ratio": "miettinen-nurminen",
    "odds-ratio": "miettinen-nurminen",
}
# Cornfield's exact interval enumerates the conditional support; its cost grows faster than the smaller
# margin (0.16 s at 1,000, 0.45 s at 2,000, 1.3 s at 5,000 here), so larger tables get a 422 (or, reported
# with Fisher's test, the Miettinen-Nurminen interval).
MAX_TRIALS_CONDITIONAL_EXACT = 2_000  # about 0.5 s here at the limit


@dataclass(frozen=True, slots=True)
class Interval:
    """A confidence interval for one comparison; ``None`` marks an unbounded or undefined value."""

    effect: str
    method: str
    confidence: float
    estimate: float | None
    lower: float | None
    upper: float | None
    warnings: tuple[str, ...] = ()


# --------------------------------------------------------------------------------------------------
# One proportion


def proportion_bounds(x, n, method: str, z_lower, z_upper):
    """Return (lower, upper) arrays for a single proportion ``x / n``."""
    x = np.asarray(x, dtype=np.float64)
    n = np.asarray(n, dtype=np.float64)
    p = x / n
    if method in ("wilson", "wilson-cc"):
        cc = method == "wilson-cc"
        lower = _wilson_side(x, n, z_lower, -1.0, cc)
        upper = _wilson_side(x, n, z_upper, 1.0, cc)
    elif method == "clopper-pearson":
        # Clopper & Pearson (1934): beta quantiles at the tail areas of each side.
        a_lo = special.ndtr(-z_lower)
        a_up = special.ndtr(-z_upper)
        with np.errstate(invalid="ignore"):
            lower = np.where(x > 0, special.betaincinv(x, n - x + 1.0, a_lo), 0.0)
            upper = np.where(x < n, special.betaincinv(x + 1.0, n - x, 1.0 - a_up), 1.0)
    elif method == "jeffreys":
        # Jeffreys prior Beta(1/2, 1/2); the limits are set to 0 and 1 at x = 0 and x = n as
        # Brown, Cai & DasGupta (2001), Statistical Science 16:101-133, section 4.1.2 recommend.
        a_lo = special.ndtr(-z_lower)
        a_up = special.ndtr(-z_upper)
        lower = np.where(x > 0, special.betaincinv(x + 0.5, n - x + 0.5, a_lo), 0.0)
        upper = np.where(x < n, special.betaincinv(x + 0.5, n - x + 0.5, 1.0 - a_up), 1.0)
    elif method == "agresti-coull":
        # Agresti & Coull (1998): add z^2/2 successes and z^2/2 failures, then Wald. Each side uses its
        # own z, so a one-sided bound shrinks towards 1/2 by its own critical value.
        lower = _agresti_coull_side(x, n, z_lower, -1.0)
        upper = _agresti_coull_side(x, n, z_upper, 1.0)
    elif method == "wald":
        se = np.sqrt(p * (1.0 - p) / n)
        lower = p - z_lower * se
        upper = p + z_upper * se
    else:
        check_method(method, PROPORTION_METHODS)
    lower = np.where(np.isinf(z_lower), 0.0, lower)
    upper = np.where(np.isinf(z_upper), 1.0, upper)
    return np.clip(lower, 0.0, 1.0), np.clip(upper, 0.0, 1.0)


def _wilson_side(x, n, z, sign: float, cc: bool):
    """One limit of the Wilson score interval, optionally with continuity correction.

    Wilson (1927), JASA 22:209-212; with correction Newcombe (1998), Statistics in Medicine 17:857-872,
    method 4. Written as the root of (|p - pi| - c)^2 = z^2 pi (1 - pi) / n with c = 1/(2n) or 0.
    """
    z = np.where(np.isinf(z), 0.0, z)
    z2 = z * z
    p = x / n
    c = 0.5 / n if cc else 0.0
    # Shift the observed proportion by the correction towards the limit being sought.
    shifted = np.clip(p + sign * c, 0.0, 1.0)
    centre = shifted + z2 / (2.0 * n)
    spread = z * np.sqrt(np.maximum(shifted * (1.0 - shifted) / n + z2 / (4.0 * n * n), 0.0))
    limit = (centre + sign * spread) / (1.0 + z2 / n)
    if cc:
        # At x = 0 (x = n) the corrected lower (upper) limit is 0 (1) by definition.
        limit = np.where((sign < 0) & (x == 0), 0.0, limit)
        limit = np.where((sign > 0) & (x == n), 1.0, limit)
    return limit


def _agresti_coull_side(x, n, z, sign: float):
    z = np.where(np.isinf(z), 0.0, z)
    n_adj = n + z * z
    p_adj = (x + z * z / 2.0) / n_adj
    return p_adj + sign * z * np.sqrt(p_adj * (1.0 - p_adj) / n_adj)


# --------------------------------------------------------------------------------------------------
# Two proportions


def difference_bounds(x1, n1, x2, n2, method: str, z_lower, z_upper):
    """Return (lower, upper) for ``p1 - p2`` (group 1 = treatment)."""
    p1 = x1 / n1
    p2 = x2 / n2
    d = p1 - p2
    if method in ("wald", "wald-cc"):
        se = np.sqrt(p1 * (1.0 - p1) / n1 + p2 * (1.0 - p2) / n2)
        cc = 0.5 * (1.0 / n1 + 1.0 / n2) if method == "wald-cc" else 0.0
        lower = d - (z_lower * se + cc)
        upper = d + (z_upper * se + cc)
    elif method == "agresti-caffo":
        # Agresti & Caffo (2000), The American Statistician 54:280-288: add one success and one
        # failure to each group, then Wald.
        a1 = (x1 + 1.0) / (n1 + 2.0)
        a2 = (x2 + 1.0) / (n2 + 2.0)
        se = np.sqrt(a1 * (1.0 - a1) / (n1 + 2.0) + a2 * (1.0 - a2) / (n2 + 2.0))
        lower = (a1 - a2) - z_lower * se
        upper = (a1 - a2) + z_upper * se
    elif method == "newcombe":
        # Newcombe (1998), Statistics in Medicine 17:873-890, method 10 (hybrid score): combine the
        # Wilson limits of each rate.
        l1, u1 = proportion_bounds(x1, n1, "wilson", z_lower, z_upper)
        l2, u2 = proportion_bounds(x2, n2, "wilson", z_upper, z_lower)
        lower = d - np.sqrt((p1 - l1) ** 2 + (u2 - p2) ** 2)
        upper = d + np.sqrt((u1 - p1) ** 2 + (p2 - l2) ** 2)
    elif method in ("miettinen-nurminen", "farrington-manning"):
        lower, upper = score.score_interval(
            x1, n1, x2, n2, z_lower, z_upper, "difference", correction=method == "miettinen-nurminen"
        )
    else:
        check_method(method, DIFFERENCE_METHODS)
    lower = np.where(np.isinf(z_lower), -1.0, lower)
    upper = np.where(np.isinf(z_upper), 1.0, upper)
    return np.clip(lower, -1.0, 1.0), np.clip(upper, -1.0, 1.0)


def ratio_bounds(x1, n1, x2, n2, method: str, z_lower, z_upper):
    """Return (lower, upper) for ``p1 / p2``; ``inf`` marks an unbounded upper limit."""
    if method in ("miettinen-nurminen", "farrington-manning"):
        return score.score_interval(
            x1, n1, x2, n2, z_lower, z_upper, "ratio", correction=method == "miettinen-nurminen"
        )
    check_method(method, RATIO_METHODS)
    # Katz, Baptista, Azen & Pike (1978), Biometrics 34:469-474: normal interval for log(p1/p2). With a
    # zero count the log is undefined; 0.5 is added to each success count and each trial count then
    # (the usual adjustment; a warning says so).
    zero = (x1 == 0) | (x2 == 0)
    a1 = np.where(zero, x1 + 0.5, x1)
    a2 = np.where(zero, x2 + 0.5, x2)
    m1 = np.where(zero, n1 + 0.5, n1)
    m2 = np.where(zero, n2 + 0.5, n2)
    log_r = np.log(a1 / m1) - np.log(a2 / m2)
    se = np.sqrt(np.maximum(1.0 / a1 - 1.0 / m1 + 1.0 / a2 - 1.0 / m2, 0.0))
    with np.errstate(over="ignore"):
        lower = np.where(np.isinf(z_lower), 0.0, np.exp(log_r - z_lower * se))
        upper = np.where(np.isinf(z_upper), np.inf, np.exp(log_r + z_upper * se))
    return lower, upper


def odds_ratio_bounds(x1, n1, x2, n2, method: str, z_lower, z_upper):
    """Return (lower, upper) for the odds ratio; ``inf`` marks an unbounded upper limit."""
    if method in ("miettinen-nurminen", "farrington-manning"):
        return score.score_interval(
            x1, n1, x2, n2, z_lower, z_upper, "odds-ratio", correction=method == "miettinen-nurminen"
        )
    if method == "woolf":
        # Woolf (1955), Annals of Human Genetics 19:251-253: normal interval for the log odds ratio.
        # With an empty cell 0.5 is added to all four cells (Haldane 1956; a warning says so).
        cells = [x1, n1 - x1, x2, n2 - x2]
        zero = np.zeros(np.shape(x1), dtype=bool)
        for cell in cells:
            zero |= cell == 0
        a, b, c, d = (np.where(zero, cell + 0.5, cell) for cell in cells)
        log_or = np.log(a) - np.log(b) - np.log(c) + np.log(d)
        se = np.sqrt(1.0 / a + 1.0 / b + 1.0 / c + 1.0 / d)
        with np.errstate(over="ignore"):
            lower = np.where(np.isinf(z_lower), 0.0, np.exp(log_or - z_lower * se))
            upper = np.where(np.isinf(z_upper), np.inf, np.exp(log_or + z_upper * se))
        return lower, upper
    if method == "conditional-exact":
        return _conditional_exact_bounds(x1, n1, x2, n2, z_lower, z_upper)
    check_method(method, ODDS_RATIO_METHODS)
    raise AssertionError("unreachable")


def _conditional_exact_bounds(x1, n1, x2, n2, z_lower, z_upper):
    """Cornfield (1956) exact conditional limits, each side at its own tail area.

    The computation is scipy.stats.contingency.odds_ratio(kind="conditional"), one table at a time.
    """
    if np.any(np.minimum(x1 + x2, n1 + n2 - x1 - x2) > MAX_TRIALS_CONDITIONAL_EXACT):
        raise ValueError(
            "conditional-exact needs the smaller table margin (total successes or total failures) to be at "
            f"most {MAX_TRIALS_CONDITIONAL_EXACT:,}; use miettinen-nurminen for tables this large"
        )
    # Imported here: scipy.stats costs ~0.3 s of start-up that most callers (a CI gate) never need.
    from scipy.stats import contingency

    lower = np.empty(np.shape(x1))
    upper = np.empty(np.shape(x1))
    for i in np.ndindex(np.shape(x1)):
        table = np.array([[x1[i], n1[i] - x1[i]], [x2[i], n2[i] - x2[i]]], dtype=np.int64)
        res = contingency.odds_ratio(table, kind="conditional")
        lo = up = None
        if np.isfinite(z_lower[i]):
            conf = 1.0 - 2.0 * float(special.ndtr(-z_lower[i]))
            lo = res.confidence_interval(confidence_level=max(conf, 1e-12), alternative="two-sided").low
        if np.isfinite(z_upper[i]):
            conf = 1.0 - 2.0 * float(special.ndtr(-z_upper[i]))
            up = res.confidence_interval(confidence_level=max(conf, 1e-12), alternative="two-sided").high
        lower[i] = 0.0 if lo is None else lo
        upper[i] = np.inf if up is None else up
    return lower, upper


# --------------------------------------------------------------------------------------------------
# Estimates


def rate_estimates(x1, n1, x2, n2):
    """Return (p1, p2, difference, ratio, odds ratio) arrays, NaN where a quantity is undefined.

    ``twogroup._one_values`` repeats this (and the Wald bounds of :func:`difference_bounds`) with floats.
    """
    p1 = x1 / n1
    p2 = x2 / n2
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(x2 > 0, p1 / np.where(x2 > 0, p2, 1.0), np.nan)
        odds_ratio = (x1 * (n2 - x2)) / ((n1 - x1) * x2)
    odds_ratio = np.where(np.isfinite(odds_ratio), odds_ratio, np.nan)
    return p1, p2, rate_difference(x1, n1, x2, n2), ratio, odds_ratio


def effect_bounds(effect: str, x1, n1, x2, n2, method: str, z_lower, z_upper):
    """Dispatch to the bounds function of ``effect``."""
    if effect == "difference":
        return difference_bounds(x1, n1, x2, n2, method, z_lower, z_upper)
    if effect == "ratio":
        return ratio_bounds(x1, n1, x2, n2, method, z_lower, z_upper)
    if effect == "odds-ratio":
        return odds_ratio_bounds(x1, n1, x2, n2, method, z_lower, z_upper)
    raise ValueError(f'effect "{effect}" not recognized; use difference, ratio, odds-ratio or proportion')


def interval_warnings(effect: str, method: str, x1, n1, x2=None, n2=None) -> list[str]:
    """Return the plain-language cautions that apply to one interval."""
    notes: list[str] = []
    if effect == "proportion":
        if method == "wald" and (x1 == 0 or x1 == n1):
            notes.append("the Wald interval has zero width when every trial fails or succeeds; use wilson")
        return notes
    if effect in ("ratio", "odds-ratio") and x2 == 0 and x1 == 0:
        notes.append(f"the {effect.replace('-', ' ')} is undefined: neither group has a success")
    elif effect == "ratio" and x2 == 0:
        notes.append("the ratio is unbounded: the control group has no successes")
    if effect == "odds-ratio" and x1 == n1 and x2 == n2:
        notes.append("the odds ratio is undefined: every trial in both groups succeeded")
    elif effect == "odds-ratio" and (x2 == 0 or x1 == n1) and not (x1 == 0 and x2 == 0):
        notes.append("the odds ratio is unbounded: the control has no successes or the treatment no failures")
    if method == "katz-log" and (x1 == 0 or x2 == 0):
        notes.append("a group has no successes, so 0.5 was added to each success and trial count (katz-log)")
    if method == "woolf" and min(x1, n1 - x1, x2, n2 - x2) == 0:
        notes.append("a cell of the table is empty, so 0.5 was added to every cell (woolf)")
    if method in ("wald", "wald-cc") and x1 in (0, n1) and x2 in (0, n2):
        notes.append("the Wald interval is degenerate when both rates are 0 or 1; use newcombe")
    return notes


def interval(
    effect: str,
    method: str | None = None,
    confidence: float = 0.95,
    *,
    successes=None,
    trials=None,
    treatment=None,
    control=None,
) -> Interval:
    """Return a two-sided confidence interval for one proportion or one two-group comparison.

    Parameters
    ----------
    effect : {"proportion", "difference", "ratio", "odds-ratio"}
    method : str, optional
        One of :data:`METHODS[effect] <METHODS>`; the default is :data:`DEFAULT_METHOD[effect]`.
    confidence : float
        Coverage in (0, 1).
    successes, trials : int
        The counts of the single group (``effect="proportion"``).
    treatment, control : tuple[int, int]
        ``(successes, trials)`` of each group for the two-group effects.
    """
    check_method(effect, tuple(METHODS), "effect")
    method = DEFAULT_METHOD[effect] if method is None else method
    check_method(method, METHODS[effect])
    confidence = check_confidence(confidence)
    z = np.array([z_two_sided(confidence)])
    if effect == "proportion":
        x, n = as_counts(successes, trials, "group")
        lower, upper = proportion_bounds(x, n, method, z, z)
        return Interval(
            effect, method, confidence, float(x[0] / n[0]), float(lower[0]), float(upper[0]),
            tuple(interval_warnings(effect, method, x[0], n[0])),
        )
    x1, n1 = as_counts(treatment[0], treatment[1], "treatment")
    x2, n2 = as_counts(control[0], control[1], "control")
    lower, upper = effect_bounds(effect, x1, n1, x2, n2, method, z, z)
    p1, p2, diff, ratio, odds = rate_estimates(x1, n1, x2, n2)
    est = {"difference": diff, "ratio": ratio, "odds-ratio": odds}[effect][0]
    return Interval(
        effect, method, confidence, finite_or_none(est), finite_or_none(lower[0]), finite_or_none(upper[0]),
        tuple(interval_warnings(effect, method, x1[0], n1[0], x2[0], n2[0])),
    )


def finite_or_none(v) -> float | None:
    """Return ``v`` as a float, or None where it is NaN (undefined) or infinite (unbounded)."""
    v = float(v)
    return v if np.isfinite(v) else None
