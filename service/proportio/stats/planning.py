"""Plan two-group comparisons of rates: sample size, power and minimum detectable effect.

The planner answers three questions for a comparison of a treatment rate ``p_t`` with a control
rate ``p_c`` by a normal-approximation test of the difference ``d = p_t - p_c``:

* how many trials are needed (``solve_for="sample-size"``, the default),
* what power given sizes have (``solve_for="power"``),
* what effect given sizes detect (``solve_for="effect"``).

All three are answered from one power function per design, so the answers are mutually
consistent: the size solved for a power reaches that power, and the effect solved for a size
needs at most that size.

Power model
-----------
With ``n_c`` and ``n_t`` trials, the estimated difference is taken as normal with mean ``d`` and
standard deviation ``sd1 = sqrt(p_c (1 - p_c) / n_c + p_t (1 - p_t) / n_t)`` (the variance under
the alternative).  A test of ``H0: d = d0`` rejects when the estimate lies beyond
``d0 +/- (z * sd0 + cc)``, where ``sd0`` is the standard deviation used by the test under the null,
``z`` the normal critical value and ``cc`` the continuity correction (zero unless requested):

* ``method="z-unpooled"``: ``sd0 = sd1`` (Chow, Shao & Wang 2008, ch. 4).
* ``method="z-pooled"``: ``sd0`` is evaluated at the rates that maximise the likelihood under the
  null restriction ``p_t - p_c = d0``, taking the planned rates as the data.  For ``d0 = 0`` these
  are both the pooled rate ``(n_c p_c + n_t p_t) / (n_c + n_t)`` -- the classic pooled-variance
  formula (Fleiss, Levin & Paik 2003, ch. 4).  For the non-zero null differences of the
  non-inferiority and equivalence designs the pooled rate is not a null estimate, and the
  restricted maximum-likelihood rates of Farrington & Manning (1990) are used instead (the score
  test of Miettinen & Nurminen 1985 without its ``N / (N - 1)`` factor).
* ``continuity_correction=True``: ``cc = (1 / n_c + 1 / n_t) / 2``, the Fleiss correction.  For a
  superiority design, solving the resulting power equation for the size gives exactly the
  closed form of Fleiss, Tytun & Ury (1980),
  ``n_c' = n_c / 4 * (1 + sqrt(1 + 2 (r + 1) / (r n_c |d|)))**2``, where ``n_c`` is the
  uncorrected size and ``r = n_t / n_c``; for ``r = 1`` this is
  ``n / 4 * (1 + sqrt(1 + 4 / (n |d|)))**2``.  For the non-inferiority and equivalence designs the
  same shift is applied to each one-sided boundary (an extension; a warning says so).

Designs
-------
superiority
    ``H0: d = 0``.  ``alternative="two-sided"`` tests at ``alpha / 2`` per side; ``"greater"`` and
    ``"less"`` are one-sided at ``alpha``.  The expected rate must differ from the baseline.
non-inferiority
    One-sided at ``alpha`` with ``margin > 0`` on the difference scale.  ``"greater"`` (higher rates
    are better, e.g. a success rate): ``H0: d <= -margin`` vs ``H1: d > -margin``.  ``"less"``
    (lower rates are better, e.g. an error rate): ``H0: d >= margin`` vs ``H1: d < margin``.
    ``"two-sided"`` (the default of ``alternative``) is read as ``"greater"`` at one-sided
    ``alpha`` and a warning says so.  The expected rate may equal the baseline (the usual case).
equivalence
    Two one-sided tests (Schuirmann 1987), each at ``alpha``, of ``H0: |d| >= margin``; requires
    ``|expected d| < margin``.  Power is the normal-approximation probability that both tests
    reject (Chow, Shao & Wang 2008, ch. 4).  ``alternative`` must be ``"two-sided"``.

Sizes and rounding
------------------
``allocation_ratio`` is ``r = n_treatment / n_control``.  When solving for the sample size,
``n_control`` is the smallest integer for which the power at ``(n_control, ceil(r * n_control))``
reaches the target; ``n_treatment = ceil(r * n_control)``.  The search is on the integers, so the
power is achieved at the sizes actually reported.  For ``r = 1`` the result equals the textbook
closed form rounded up; for other ratios it can be one less, when rounding ``n_treatment`` up
already buys the missing power.

For a two-sided superiority test the size and the effect are solved from the tail in the
direction of the effect, as in the textbook formula; the far tail adds at most ``alpha / 2`` and
is included in the reported ``power``, which is the probability of rejecting the null hypothesis,
so the reported power is never below the target.

References
----------
Fleiss JL, Levin B, Paik MC (2003). Statistical Methods for Rates and Proportions, 3rd ed.
    Wiley, ch. 4.
Fleiss JL, Tytun A, Ury HK (1980). A simple approximation for calculating sample sizes for
    comparing independent proportions. Biometrics 36:343-346.
Chow SC, Shao J, Wang H (2008). Sample Size Calculations in Clinical Research, 2nd ed.
    Chapman & Hall/CRC, ch. 4.
Farrington CP, Manning G (1990). Test statistics and sample size formulae for comparative binomial
    trials with null hypothesis of non-zero risk difference or non-unity relative risk.
    Statistics in Medicine 9:1447-1454.
Miettinen O, Nurminen M (1985). Comparative analysis of two rates. Statistics in Medicine
    4:213-226.
Schuirmann DJ (1987). A comparison of the two one-sided tests procedure and the power approach for
    assessing the equivalence of average bioavailability. Journal of Pharmacokinetics and
    Biopharmaceutics 15:657-680.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Callable, Sequence
from dataclasses import dataclass

from scipy.special import ndtr, ndtri

__all__ = ["MAX_TRIALS", "PlanResult", "plan", "sweep"]

MAX_TRIALS = 10**12

_ALTERNATIVES = ("two-sided", "greater", "less")
_DESIGNS = ("superiority", "non-inferiority", "equivalence")
_METHODS = ("z-pooled", "z-unpooled")
_SOLVE_FOR = ("sample-size", "power", "effect")
_SWEEP_VARS = (
    "n_control",
    "power",
    "expected_rate",
    "absolute_effect",
    "relative_effect",
    "alpha",
    "allocation_ratio",
)
_MAX_SWEEP = 200
# Rates searched for the detectable effect stay this far inside (0, 1).
_RATE_EDGE = 1e-12
# Bisection on the rate scale stops at this width.
_RATE_TOL = 1e-10
_MIN_EXPECTED_COUNT = 5.0


@dataclass(frozen=True, slots=True)
class PlanResult:
    """Result of a planning calculation.

    Attributes
    ----------
    n_control, n_treatment, n_total : int
        Group sizes (solved, or as given when solving for power or effect) and their sum.
    power : float
        Probability of rejecting the null hypothesis at the reported sizes and rates (both tails of
        a two-sided superiority test).  When solving for the size or effect it is never below
        ``target_power``.
    baseline_rate, expected_rate : float
        Control rate and the (given or solved) treatment rate.
    absolute_effect, relative_effect : float
        ``expected_rate - baseline_rate`` and ``expected_rate / baseline_rate - 1``.
    alpha : float
        Significance level (per one-sided test for non-inferiority and equivalence).
    target_power : float or None
        The power asked for; None when solving for power.
    alternative : str
        The alternative actually tested (``"greater"`` for a non-inferiority request given as
        ``"two-sided"``).
    allocation_ratio : float
        ``n_treatment / n_control``: the requested ratio when solving for the size, the ratio of
        the given sizes otherwise.
    design, margin, method, continuity_correction, solve_for
        The request, echoed (``margin`` is None for superiority).
    formula : str
        Short name of the formula and its source.
    summary : str
        One plain-language sentence.
    warnings : tuple of str
        Cautions about the approximation or about how the request was read.
    """

    n_control: int
    n_treatment: int
    n_total: int
    power: float
    baseline_rate: float
    expected_rate: float
    absolute_effect: float
    relative_effect: float
    alpha: float
    target_power: float | None
    alternative: str
    allocation_ratio: float
    design: str
    margin: float | None
    method: str
    continuity_correction: bool
    solve_for: str
    formula: str
    summary: str
    warnings: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class _Setup:
    """Validated settings that fix the power function."""

    p_c: float
    alpha: float
    alternative: str
    design: str
    margin: float
    pooled: bool
    cc: bool
    z_crit: float


# ----------------------------------------------------------------------------------------------
# Power machinery
# ----------------------------------------------------------------------------------------------


def _restricted_rates(p_c: float, p_t: float, n_c: float, n_t: float, d0: float) -> tuple[float, float]:
    """Return the control and treatment rates maximising the likelihood under ``p_t - p_c = d0``.

    The planned rates play the part of the observed proportions.  The score equation
    ``w_c (p_c - x) / (x (1 - x)) + w_t (p_t - y) / (y (1 - y)) = 0`` with ``y = x + d0`` is a cubic
    in ``x``; its root in the feasible range is taken in the trigonometric closed form of
    Miettinen & Nurminen (1985), as in Farrington & Manning (1990).  Bisection on the score (which
    is decreasing, the log-likelihood being concave) is the fallback when rounding spoils the
    closed form.

    References
    ----------
    Miettinen O, Nurminen M (1985). Statistics in Medicine 4:213-226.
    Farrington CP, Manning G (1990). Statistics in Medicine 9:1447-1454.
    """
    if d0 == 0.0:
        pooled = (n_c * p_c + n_t * p_t) / (n_c + n_t)
        return pooled, pooled
    # Scale-free weights keep the cubic's coefficients of order one at 10^12 trials.
    w_c = n_c / (n_c + n_t)
    w_t = 1.0 - w_c
    x_c = w_c * p_c
    x_all = x_c + w_t * p_t
    a3 = 1.0
    a2 = (w_t + 2.0 * w_c) * d0 - 1.0 - x_all
    # The d0**2 term is weighted by the control share, not its successes (statsmodels 0.15 issue
    # #10269 has the latter); derived by expanding the score equation.
    a1 = (w_c * d0 - 1.0 - 2.0 * x_c) * d0 + x_all
    a0 = x_c * d0 * (1.0 - d0)
    lo = max(0.0, -d0)
    hi = min(1.0, 1.0 - d0)
    q = (a2 / (3.0 * a3)) ** 3 - a1 * a2 / (6.0 * a3**2) + a0 / (2.0 * a3)
    s2 = (a2 / (3.0 * a3)) ** 2 - a1 / (3.0 * a3)
    r_c = math.nan
    if s2 > 0.0:
        s = math.copysign(math.sqrt(s2), q)
        ratio = max(-1.0, min(1.0, q / s**3))
        angle = (math.pi + math.acos(ratio)) / 3.0
        r_c = 2.0 * s * math.cos(angle) - a2 / (3.0 * a3)
    if not (lo < r_c < hi):
        r_c = _restricted_rate_bisect(p_c, p_t, w_c, w_t, d0, lo, hi)
    return r_c, r_c + d0


def _restricted_rate_bisect(
    p_c: float, p_t: float, w_c: float, w_t: float, d0: float, lo: float, hi: float
) -> float:
    """Solve the restricted score equation by bisection (the log-likelihood is concave)."""

    def score(x: float) -> float:
        y = x + d0
        return w_c * (p_c - x) / (x * (1.0 - x)) + w_t * (p_t - y) / (y * (1.0 - y))

    a, b = lo + 1e-15, hi - 1e-15
    for _ in range(200):
        mid = 0.5 * (a + b)
        if score(mid) > 0.0:
            a = mid
        else:
            b = mid
        if b - a <= 1e-15:
            break
    return 0.5 * (a + b)


def _null_sd(s: _Setup, p_c: float, p_t: float, n_c: float, n_t: float, d0: float, sd1: float) -> float:
    """Return the standard deviation of the estimated difference that the test uses under H0."""
    if not s.pooled:
        return sd1
    r_c, r_t = _restricted_rates(p_c, p_t, n_c, n_t, d0)
    return math.sqrt(r_c * (1.0 - r_c) / n_c + r_t * (1.0 - r_t) / n_t)


def _diff_of_ndtr(a: float, b: float) -> float:
    """Return ``ndtr(a) - ndtr(b)`` for ``a >= b`` without cancellation in the upper tail."""
    if a + b > 0.0:
        return float(ndtr(-b) - ndtr(-a))
    return float(ndtr(a) - ndtr(b))


def _power(s: _Setup, p_t: float, n_c: float, n_t: float) -> tuple[float, float]:
    """Return (criterion, power) at the given rate and sizes.

    ``power`` is the probability of rejecting H0.  ``criterion`` is what the size and effect are
    solved from: the same, except for a two-sided superiority test, where it is the tail in the
    direction of the effect (the textbook convention).
    """
    p_c = s.p_c
    d = p_t - p_c
    sd1 = math.sqrt(p_c * (1.0 - p_c) / n_c + p_t * (1.0 - p_t) / n_t)
    cc = 0.5 * (1.0 / n_c + 1.0 / n_t) if s.cc else 0.0
    z = s.z_crit
    if s.design == "superiority":
        sd0 = _null_sd(s, p_c, p_t, n_c, n_t, 0.0, sd1)
        upper = float(ndtr((d - cc - z * sd0) / sd1))
        lower = float(ndtr((-d - cc - z * sd0) / sd1))
        if s.alternative == "greater":
            return upper, upper
        if s.alternative == "less":
            return lower, lower
        return (upper if d > 0.0 else lower), min(1.0, upper + lower)
    m = s.margin
    if s.design == "non-inferiority":
        if s.alternative == "greater":
            sd0 = _null_sd(s, p_c, p_t, n_c, n_t, -m, sd1)
            pw = float(ndtr((d + m - cc - z * sd0) / sd1))
        else:
            sd0 = _null_sd(s, p_c, p_t, n_c, n_t, m, sd1)
            pw = float(ndtr((m - d - cc - z * sd0) / sd1))
        return pw, pw
    sd_low = _null_sd(s, p_c, p_t, n_c, n_t, -m, sd1)
    sd_upp = _null_sd(s, p_c, p_t, n_c, n_t, m, sd1)
    a = (m - cc - z * sd_upp - d) / sd1
    b = (-m + cc + z * sd_low - d) / sd1
    pw = max(0.0, _diff_of_ndtr(a, b)) if a > b else 0.0
    return pw, pw


def _treatment_size(ratio: float, n_c: int) -> int:
    """Return ``ceil(ratio * n_c)``, reading products within rounding error of an integer as it."""
    x = ratio * n_c
    k = round(x)
    # A ratio computed as n_t / n_c must give back n_t, not n_t + 1.
    if abs(x - k) <= 4.0 * 2.2e-16 * max(1.0, x):
        return max(1, int(k))
    return max(1, math.ceil(x))


def _largest_control(ratio: float) -> int:
    """Return the largest n_c for which both groups stay within MAX_TRIALS."""
    if ratio <= 1.0:
        return MAX_TRIALS
    n = int(MAX_TRIALS / ratio)
    while n > 1 and _treatment_size(ratio, n) > MAX_TRIALS:
        n -= 1
    return max(1, n)


def _smallest_integer(ok: Callable[[int], bool], guess: float, n_max: int) -> int | None:
    """Return the smallest n in [1, n_max] with ok(n), searching outward from guess; None if none."""
    if not math.isfinite(guess):
        guess = float(n_max)
    g = int(min(max(1.0, math.ceil(guess)), float(n_max)))
    if ok(g):
        hi, lo, step = g, 0, 1
        while hi - step >= 1:
            cand = hi - step
            if ok(cand):
                hi = cand
                step *= 2
            else:
                lo = cand
                break
    else:
        if not ok(n_max):
            return None
        lo, step = g, 1
        while True:
            cand = min(lo + step, n_max)
            if ok(cand):
                hi = cand
                break
            lo = cand
            step *= 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if ok(mid):
            hi = mid
        else:
            lo = mid
    return hi


def _size_guess(s: _Setup, p_t: float, ratio: float, target: float) -> float:
    """Return the closed-form (real) control size that the integer search starts from."""
    p_c = s.p_c
    d = p_t - p_c
    n_t = ratio
    sd1 = math.sqrt(p_c * (1.0 - p_c) + p_t * (1.0 - p_t) / n_t)
    m = s.margin
    if s.design == "superiority":
        gap = abs(d)
        sd0 = _null_sd(s, p_c, p_t, 1.0, n_t, 0.0, sd1)
        z_b = float(-ndtri(1.0 - target))
    elif s.design == "non-inferiority":
        d0 = -m if s.alternative == "greater" else m
        gap = abs(d - d0)
        sd0 = _null_sd(s, p_c, p_t, 1.0, n_t, d0, sd1)
        z_b = float(-ndtri(1.0 - target))
    else:
        # Chow, Shao & Wang's conservative form: beta split over the two tests.
        gap = m - abs(d)
        sd0 = max(
            _null_sd(s, p_c, p_t, 1.0, n_t, -m, sd1),
            _null_sd(s, p_c, p_t, 1.0, n_t, m, sd1),
        )
        z_b = float(-ndtri(0.5 * (1.0 - target)))
    if gap <= 0.0:
        return math.inf
    n = ((s.z_crit * sd0 + z_b * sd1) / gap) ** 2
    if s.cc and n > 0.0:
        n = n / 4.0 * (1.0 + math.sqrt(1.0 + 2.0 * (ratio + 1.0) / (ratio * n * gap))) ** 2
    return n


def _bisect_rate(ok: Callable[[float], bool], good: float, bad: float) -> float:
    """Return a rate with ok(rate) within _RATE_TOL of the boundary between good and bad."""
    for _ in range(200):
        if abs(good - bad) <= _RATE_TOL:
            break
        mid = 0.5 * (good + bad)
        if mid in (good, bad):
            break
        if ok(mid):
            good = mid
        else:
            bad = mid
    return good


# ----------------------------------------------------------------------------------------------
# Validation
# ----------------------------------------------------------------------------------------------


def _real(name: str, value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ValueError(f"{name} must be a number (got {value!r})")
    x = float(value)
    if not math.isfinite(x):
        raise ValueError(f"{name} must be a finite number (got {value!r})")
    return x


def _rate(name: str, value: object) -> float:
    x = _real(name, value)
    if not 0.0 < x < 1.0:
        raise ValueError(f"{name} must be strictly between 0 and 1 (got {value!r})")
    return x


def _size(name: str, value: object) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise ValueError(f"{name} must be a whole number of trials (got {value!r})")
    if isinstance(value, numbers.Integral):
        n = int(value)
    else:
        x = float(value)
        if not (math.isfinite(x) and x.is_integer()):
            raise ValueError(f"{name} must be a whole number of trials (got {value!r})")
        n = int(x)
    if not 1 <= n <= MAX_TRIALS:
        raise ValueError(f"{name} must be between 1 and {MAX_TRIALS:,} (got {value!r})")
    return n


def _choice(name: str, value: object, options: Sequence[str]) -> str:
    if not isinstance(value, str) or value not in options:
        listed = ", ".join(options[:-1]) + " or " + options[-1]
        raise ValueError(f'{name} "{value}" not recognized; use {listed}')
    return value


def _expected_from_effect(
    p_c: float, expected_rate: object, absolute_effect: object, relative_effect: object
) -> tuple[str, float] | None:
    """Return (argument name, expected rate) from the one effect given, or None if none is given."""
    given = [
        (name, value)
        for name, value in (
            ("expected_rate", expected_rate),
            ("absolute_effect", absolute_effect),
            ("relative_effect", relative_effect),
        )
        if value is not None
    ]
    if len(given) > 1:
        names = ", ".join(name for name, _ in given)
        raise ValueError(
            f"give only one of expected_rate, absolute_effect, relative_effect (got {names})"
        )
    if not given:
        return None
    name, value = given[0]
    if name == "expected_rate":
        return name, _rate(name, value)
    x = _real(name, value)
    p_t = p_c + x if name == "absolute_effect" else p_c * (1.0 + x)
    if not 0.0 < p_t < 1.0:
        raise ValueError(
            f"{name} {value!r} puts the expected rate at {p_t!r}, outside (0, 1); "
            f"use a smaller {name}"
        )
    return name, p_t


# ----------------------------------------------------------------------------------------------
# Wording
# ----------------------------------------------------------------------------------------------


def _pct_pair(a: float, b: float) -> tuple[str, str]:
    """Format two rates as percentages: one decimal, more if needed to tell them apart."""
    for k in range(1, 11):
        sa, sb = f"{100.0 * a:.{k}f}%", f"{100.0 * b:.{k}f}%"
        if sa != sb or a == b:
            return sa, sb
    return sa, sb


def _pct(x: float) -> str:
    """Format a probability as a percentage with one decimal, more near 0% and 100%."""
    for k in range(1, 7):
        s = f"{100.0 * x:.{k}f}"
        if (s != f"{100.0:.{k}f}" or x >= 1.0) and (s != f"{0.0:.{k}f}" or x <= 0.0):
            return s + "%"
    return s + "%"


def _points(x: float) -> str:
    """Format a difference of rates in percentage points: one decimal, more if it rounds to 0."""
    for k in range(1, 11):
        s = f"{100.0 * abs(x):.{k}f}"
        if s.strip("0.") or x == 0.0:
            return s
    return s


def _level(x: float) -> str:
    return f"{round(100.0 * x, 10):g}%"


def _groups(n_c: int, n_t: int) -> str:
    if n_c == n_t:
        return f"{n_c:,} trials per group"
    return f"{n_c:,} trials in control and {n_t:,} in treatment"


def _formula(s: _Setup) -> str:
    cc = ""
    if s.cc:
        cc = "; continuity correction (Fleiss, Tytun & Ury 1980; Fleiss, Levin & Paik 2003, ch. 4)"
        if s.design != "superiority":
            cc += " applied to each one-sided boundary"
    if s.design == "superiority":
        if s.pooled:
            return "pooled-variance normal approximation (Fleiss, Levin & Paik 2003, ch. 4)" + cc
        return "unpooled-variance normal approximation (Chow, Shao & Wang 2008, ch. 4)" + cc
    if s.design == "non-inferiority":
        if s.pooled:
            return (
                "non-inferiority, normal approximation with the null variance at the restricted "
                "maximum-likelihood rates (Farrington & Manning 1990)" + cc
            )
        return "non-inferiority, unpooled-variance normal approximation (Chow, Shao & Wang 2008, ch. 4)" + cc
    if s.pooled:
        return (
            "equivalence by two one-sided tests (Schuirmann 1987), normal approximation with the null "
            "variances at the restricted maximum-likelihood rates (Farrington & Manning 1990)" + cc
        )
    return (
        "equivalence by two one-sided tests (Schuirmann 1987), unpooled-variance normal "
        "approximation (Chow, Shao & Wang 2008, ch. 4)" + cc
    )


def _summary(
    s: _Setup,
    solve_for: str,
    p_t: float,
    n_c: int,
    n_t: int,
    power: float,
    target: float | None,
    fall_rate: float | None,
) -> str:
    pc, pt = _pct_pair(s.p_c, p_t)
    groups = _groups(n_c, n_t)
    alpha = _level(s.alpha)
    target_s = _level(target) if target is not None else ""
    d = p_t - s.p_c
    if s.design == "superiority":
        sided = "two-sided" if s.alternative == "two-sided" else "one-sided"
        move = "rise" if d > 0 else "fall"
        if solve_for == "sample-size":
            return (
                f"To detect a {move} from {pc} to {pt} with {target_s} power at a {sided} {alpha} "
                f"level, plan {groups}, {n_c + n_t:,} in all."
            )
        if solve_for == "power":
            return (
                f"With {groups}, a {sided} {alpha} test detects a {move} from {pc} to {pt} with "
                f"{_pct(power)} power."
            )
        rel = f"{100.0 * (p_t / s.p_c - 1.0):+.1f}%"
        text = (
            f"With {groups}, a {sided} {alpha} test has {target_s} power to detect a {move} from {pc} "
            f"to {pt} ({_points(d)} percentage points, {rel}) or larger"
        )
        if s.alternative == "two-sided":
            if fall_rate is None:
                text += "; no fall is detected with that power"
            else:
                _, pf = _pct_pair(s.p_c, fall_rate)
                text += f"; a fall is detected with that power if it goes to {pf} or lower"
        return text + "."
    m = _points(s.margin)
    if s.design == "non-inferiority":
        side = "below" if s.alternative == "greater" else "above"
        claim = f"the treatment rate is at most {m} percentage points {side} the control rate"
        if solve_for == "sample-size":
            return (
                f"To show that {claim} (one-sided {alpha} level) with {target_s} power when the true "
                f"rates are {pc} (control) and {pt} (treatment), plan {groups}, {n_c + n_t:,} in all."
            )
        if solve_for == "power":
            return (
                f"With {groups}, a one-sided {alpha} test shows that {claim} with {_pct(power)} power "
                f"when the true rates are {pc} (control) and {pt} (treatment)."
            )
        bound = "at least" if s.alternative == "greater" else "at most"
        return (
            f"With {groups}, a one-sided {alpha} test shows that {claim} with {target_s} power if the "
            f"true treatment rate is {bound} {pt} against a control rate of {pc}."
        )
    claim = f"the two rates are within {m} percentage points of each other"
    if solve_for == "sample-size":
        return (
            f"To show that {claim} (two one-sided tests, each at {alpha}) with {target_s} power when "
            f"the true rates are {pc} (control) and {pt} (treatment), plan {groups}, {n_c + n_t:,} in all."
        )
    if solve_for == "power":
        return (
            f"With {groups}, two one-sided tests at {alpha} show that {claim} with {_pct(power)} power "
            f"when the true rates are {pc} (control) and {pt} (treatment)."
        )
    return (
        f"With {groups}, two one-sided tests at {alpha} show that {claim} with {target_s} power as "
        f"long as the true treatment rate rises no further than {pt} from a control rate of {pc} "
        f"({_points(d)} percentage points)."
    )


# ----------------------------------------------------------------------------------------------
# Public API
# ----------------------------------------------------------------------------------------------


def plan(
    baseline_rate: float,
    *,
    expected_rate: float | None = None,
    absolute_effect: float | None = None,
    relative_effect: float | None = None,
    alpha: float = 0.05,
    power: float = 0.8,
    alternative: str = "two-sided",
    allocation_ratio: float = 1.0,
    design: str = "superiority",
    margin: float | None = None,
    method: str = "z-pooled",
    continuity_correction: bool = False,
    solve_for: str = "sample-size",
    n_control: int | None = None,
    n_treatment: int | None = None,
) -> PlanResult:
    """Solve a two-group rate comparison for its sample size, power or detectable effect.

    The model, the designs and the rounding rules are described in the module docstring.

    Parameters
    ----------
    baseline_rate : float
        Control rate ``p_c``, in (0, 1).
    expected_rate, absolute_effect, relative_effect : float, optional
        The treatment rate ``p_t``, given as exactly one of: the rate itself,
        ``p_t - p_c``, or ``p_t / p_c - 1``.  Required when solving for the size or the power;
        must be omitted when solving for the effect.
    alpha : float
        Significance level in (0, 0.5]; split over the two sides of a two-sided superiority test,
        used by each one-sided test of the non-inferiority and equivalence designs.
    power : float
        Target power in (0, 1), above ``alpha``; unused when solving for power.
    alternative : {"two-sided", "greater", "less"}
        See the designs in the module docstring.
    allocation_ratio : float
        ``n_treatment / n_control`` (> 0).  When solving for power or effect with only
        ``n_control`` given, ``n_treatment = ceil(allocation_ratio * n_control)``; with both sizes
        given, leave it at 1 (it is then read from the sizes) or make it agree with them.
    design : {"superiority", "non-inferiority", "equivalence"}
    margin : float, optional
        Margin on the difference scale, in (0, 1); required for non-inferiority and equivalence,
        not accepted for superiority.
    method : {"z-pooled", "z-unpooled"}
        Variance of the test statistic under the null hypothesis.
    continuity_correction : bool
        Apply the Fleiss continuity correction.
    solve_for : {"sample-size", "power", "effect"}
    n_control, n_treatment : int, optional
        Group sizes (1 to ``MAX_TRIALS``) when solving for power or effect.

    Returns
    -------
    PlanResult

    Raises
    ------
    ValueError
        For any argument outside its domain, with a message naming it and saying what to change;
        when the target cannot be reached within ``MAX_TRIALS`` trials per group or with a rate
        inside (0, 1).

    Notes
    -----
    When solving for the effect, the result is the smallest effect in the direction of
    ``alternative`` that reaches the target power at the given sizes (for two-sided superiority:
    the smallest rise, reported as a positive ``absolute_effect``; the summary also gives the
    smallest detectable fall).  For non-inferiority it is the lowest true treatment rate
    (``"greater"``) or highest (``"less"``) at which non-inferiority is shown with the target
    power -- a signed difference that may be negative.  For equivalence it is the largest rise of
    the treatment rate for which equivalence is still shown with the target power.  The rate is
    found by bisection to 1e-10.

    References
    ----------
    Fleiss JL, Levin B, Paik MC (2003). Statistical Methods for Rates and Proportions, 3rd ed.
        Wiley, ch. 4.
    Fleiss JL, Tytun A, Ury HK (1980). Biometrics 36:343-346.
    Chow SC, Shao J, Wang H (2008). Sample Size Calculations in Clinical Research, 2nd ed.
        Chapman & Hall/CRC, ch. 4.
    Farrington CP, Manning G (1990). Statistics in Medicine 9:1447-1454.
    Schuirmann DJ (1987). Journal of Pharmacokinetics and Biopharmaceutics 15:657-680.

    Examples
    --------
    >>> plan(0.10, expected_rate=0.12).n_control
    3841
    """
    warnings: list[str] = []
    p_c = _rate("baseline_rate", baseline_rate)
    alpha = _real("alpha", alpha)
    if not 0.0 < alpha <= 0.5:
        raise ValueError(f"alpha must be in (0, 0.5] (got {alpha!r})")
    target = _real("power", power)
    if not 0.0 < target < 1.0:
        raise ValueError(f"power must be strictly between 0 and 1 (got {power!r})")
    alternative = _choice("alternative", alternative, _ALTERNATIVES)
    design = _choice("design", design, _DESIGNS)
    method = _choice("method", method, _METHODS)
    solve_for = _choice("solve_for", solve_for, _SOLVE_FOR)
    if not isinstance(continuity_correction, bool):
        raise ValueError(f"continuity_correction must be true or false (got {continuity_correction!r})")
    ratio = _real("allocation_ratio", allocation_ratio)
    if ratio <= 0.0:
        raise ValueError(f"allocation_ratio must be positive (got {allocation_ratio!r})")

    if design == "superiority":
        if margin is not None:
            raise ValueError(
                'margin applies only to design "non-inferiority" or "equivalence"; drop margin or '
                "change design"
            )
        m = 0.0
    else:
        if margin is None:
            raise ValueError(f'design "{design}" needs a margin (a difference of rates, e.g. 0.02)')
        m = _real("margin", margin)
        if not 0.0 < m < 1.0:
            raise ValueError(f"margin must be strictly between 0 and 1 (got {margin!r})")
    if design == "non-inferiority" and alternative == "two-sided":
        alternative = "greater"
        warnings.append(
            'non-inferiority is a one-sided test: alternative "two-sided" was read as "greater" '
            "(higher rates are better) at one-sided alpha; give \"less\" when lower rates are better"
        )
    if design == "equivalence" and alternative != "two-sided":
        raise ValueError(
            'design "equivalence" uses two one-sided tests; alternative must be "two-sided" '
            f'(got "{alternative}")'
        )
    one_sided_alpha = alpha / 2.0 if (design == "superiority" and alternative == "two-sided") else alpha
    z_crit = float(-ndtri(one_sided_alpha))
    s = _Setup(p_c, alpha, alternative, design, m, method == "z-pooled", continuity_correction, z_crit)
    if continuity_correction and design != "superiority":
        warnings.append(
            "the Fleiss continuity correction is defined for the test of equal rates; here it shifts "
            "each one-sided boundary by (1/n_control + 1/n_treatment)/2"
        )

    # Sizes.
    if solve_for == "sample-size":
        for name, value in (("n_control", n_control), ("n_treatment", n_treatment)):
            if value is not None:
                raise ValueError(
                    f'{name} is solved for when solve_for is "sample-size"; drop {name} or set '
                    'solve_for to "power" or "effect"'
                )
    else:
        if n_control is None:
            raise ValueError(
                f'n_control is required when solve_for is "{solve_for}" (give n_control, and '
                "n_treatment or allocation_ratio)"
            )
        n_c = _size("n_control", n_control)
        if n_treatment is None:
            n_t = _treatment_size(ratio, n_c)
            if n_t > MAX_TRIALS:
                raise ValueError(
                    f"allocation_ratio {ratio!r} with n_control {n_c:,} gives more than "
                    f"{MAX_TRIALS:,} treatment trials; lower n_control or allocation_ratio"
                )
        else:
            n_t = _size("n_treatment", n_treatment)
            if ratio != 1.0 and _treatment_size(ratio, n_c) != n_t:
                raise ValueError(
                    f"allocation_ratio {ratio!r} disagrees with n_treatment {n_t:,} / n_control "
                    f"{n_c:,}; give n_treatment or allocation_ratio, not both"
                )
        ratio = n_t / n_c

    # Effect.
    effect = _expected_from_effect(p_c, expected_rate, absolute_effect, relative_effect)
    if solve_for == "effect":
        if effect is not None:
            raise ValueError(
                f'{effect[0]} is solved for when solve_for is "effect"; drop it or set solve_for '
                'to "sample-size" or "power"'
            )
    else:
        if effect is None:
            raise ValueError(
                f'solve_for "{solve_for}" needs the effect: give exactly one of expected_rate, '
                "absolute_effect, relative_effect"
            )
        effect_name, p_t = effect
        _check_effect(s, effect_name, p_t, solve_for, warnings)
    if solve_for != "power" and target <= alpha:
        raise ValueError(f"power must be greater than alpha ({alpha!r}) (got {target!r})")

    fall_rate: float | None = None
    if solve_for == "sample-size":
        n_max = _largest_control(ratio)

        def ok_size(n: int) -> bool:
            return _power(s, p_t, n, _treatment_size(ratio, n))[0] >= target

        found = _smallest_integer(ok_size, _size_guess(s, p_t, ratio, target), n_max)
        if found is None:
            widen = " or a wider margin" if design == "equivalence" else ""
            raise ValueError(
                f"this plan would need more than {MAX_TRIALS:,} trials per group; use a larger "
                f"effect{widen}, a lower power or a higher alpha"
            )
        n_c, n_t = found, _treatment_size(ratio, found)
    elif solve_for == "effect":
        p_t, fall_rate = _solve_effect(s, n_c, n_t, target, warnings)
    achieved = _power(s, p_t, n_c, n_t)[1]

    smallest = min(n_c * p_c, n_c * (1.0 - p_c), n_t * p_t, n_t * (1.0 - p_t))
    if smallest < _MIN_EXPECTED_COUNT:
        warnings.append(
            "the normal approximation may be poor: the smallest expected number of successes or "
            f"failures in a group is {smallest:.1f} (below {_MIN_EXPECTED_COUNT:g}); plan with an "
            "exact test if the rates are this extreme"
        )
    reported_target = None if solve_for == "power" else target
    return PlanResult(
        n_control=int(n_c),
        n_treatment=int(n_t),
        n_total=int(n_c + n_t),
        power=float(achieved),
        baseline_rate=p_c,
        expected_rate=float(p_t),
        absolute_effect=float(p_t - p_c),
        relative_effect=float(p_t / p_c - 1.0),
        alpha=alpha,
        target_power=reported_target,
        alternative=alternative,
        allocation_ratio=float(ratio),
        design=design,
        margin=None if design == "superiority" else m,
        method=method,
        continuity_correction=continuity_correction,
        solve_for=solve_for,
        formula=_formula(s),
        summary=_summary(s, solve_for, p_t, n_c, n_t, achieved, reported_target, fall_rate),
        warnings=tuple(warnings),
    )


def _check_effect(s: _Setup, name: str, p_t: float, solve_for: str, warnings: list[str]) -> None:
    """Reject expected rates the design cannot work with; warn where power is merely poor."""
    d = p_t - s.p_c
    if s.design == "superiority":
        if d == 0.0:
            raise ValueError(
                f"{name} makes the expected rate equal to the baseline rate; give a different rate, "
                'or use design "non-inferiority" or "equivalence" to plan for equal rates'
            )
        wrong = (s.alternative == "greater" and d < 0.0) or (s.alternative == "less" and d > 0.0)
        if wrong:
            if solve_for == "sample-size":
                side = "below" if d < 0.0 else "above"
                raise ValueError(
                    f'the expected rate is {side} the baseline rate but alternative is "{s.alternative}"; '
                    'use the opposite alternative or "two-sided"'
                )
            warnings.append(
                "the expected rate lies on the other side of the baseline from alternative "
                f'"{s.alternative}", so the power is below alpha'
            )
    elif s.design == "non-inferiority":
        inside = d > -s.margin if s.alternative == "greater" else d < s.margin
        if not inside:
            if solve_for == "sample-size":
                raise ValueError(
                    "the expected difference lies beyond the non-inferiority margin, so "
                    "non-inferiority cannot be shown; use a wider margin or a more favourable "
                    "expected rate"
                )
            warnings.append("the expected difference lies beyond the margin, so the power is at most alpha")
    elif abs(d) >= s.margin:
        raise ValueError(
            f"the equivalence margin {s.margin!r} must exceed the expected difference {abs(d)!r}; "
            "use a wider margin or an expected rate closer to the baseline"
        )


def _solve_effect(
    s: _Setup, n_c: int, n_t: int, target: float, warnings: list[str]
) -> tuple[float, float | None]:
    """Return (treatment rate at the detectable effect, fall rate for two-sided superiority)."""
    p_c = s.p_c
    lo_edge, hi_edge = _RATE_EDGE, 1.0 - _RATE_EDGE

    def ok(p: float) -> bool:
        return _power(s, p, n_c, n_t)[0] >= target

    unreachable = (
        f"no treatment rate inside (0, 1) reaches {_level(target)} power with n_control {n_c:,} and "
        f"n_treatment {n_t:,}; use larger sizes, a lower power or a higher alpha"
    )
    if s.design == "superiority":
        rise = s.alternative in ("greater", "two-sided")
        good = hi_edge if rise else lo_edge
        if not ok(good):
            raise ValueError(unreachable)
        p_t = _bisect_rate(ok, good, p_c)
        fall = None
        if s.alternative == "two-sided" and ok(lo_edge):
            fall = _bisect_rate(ok, lo_edge, p_c)
        return p_t, fall
    if s.design == "non-inferiority":
        if s.alternative == "greater":
            good, bad = hi_edge, max(p_c - s.margin, lo_edge)
        else:
            good, bad = lo_edge, min(p_c + s.margin, hi_edge)
        if not ok(good):
            raise ValueError(unreachable)
        if ok(bad):
            warnings.append(
                "every treatment rate inside (0, 1) reaches the target power; the margin is very wide"
            )
            return bad, None
        return _bisect_rate(ok, good, bad), None
    if not ok(p_c):
        raise ValueError(
            f"even equal rates do not reach {_level(target)} power for equivalence with n_control "
            f"{n_c:,} and n_treatment {n_t:,}; use larger sizes, a wider margin or a lower power"
        )
    bad = min(p_c + s.margin, hi_edge)
    if ok(bad):
        warnings.append("every higher treatment rate inside (0, 1) reaches the target power")
        return bad, None
    return _bisect_rate(ok, p_c, bad), None


def sweep(vary: str, values: Sequence[float | int], **kwargs: object) -> list[PlanResult]:
    """Plan once per value of one argument, for a curve such as power against sample size.

    Each point is exactly ``plan(**kwargs, **{vary: value})``.

    Parameters
    ----------
    vary : {"n_control", "power", "expected_rate", "absolute_effect", "relative_effect", "alpha",
            "allocation_ratio"}
        The argument that changes along the curve; it must not also appear in ``kwargs``.
    values : sequence of numbers
        1 to 200 values.
    **kwargs
        The other arguments of :func:`plan`, including ``baseline_rate``.

    Returns
    -------
    list of PlanResult
        One result per value, in order.

    Raises
    ------
    ValueError
        For a bad ``vary`` or ``values``, or when any point fails; the message names the point.

    Examples
    --------
    >>> [r.n_control for r in sweep("expected_rate", [0.12, 0.15], baseline_rate=0.10)]
    [3841, 686]
    """
    vary = _choice("vary", vary, _SWEEP_VARS)
    if vary in kwargs:
        raise ValueError(f"{vary} is the swept argument; give its values in values, not as a keyword")
    if "baseline_rate" not in kwargs:
        raise ValueError("sweep needs baseline_rate")
    if isinstance(values, (str, bytes)) or not isinstance(values, Sequence):
        raise ValueError("values must be a list of numbers")
    if not 1 <= len(values) <= _MAX_SWEEP:
        raise ValueError(f"values must hold 1 to {_MAX_SWEEP} numbers (got {len(values)})")
    baseline = kwargs.pop("baseline_rate")
    results = []
    for i, value in enumerate(values):
        try:
            results.append(plan(baseline, **{**kwargs, vary: value}))  # type: ignore[arg-type]
        except TypeError as exc:
            raise ValueError(f"sweep got an argument plan does not take: {exc}") from None
        except ValueError as exc:
            raise ValueError(f"values[{i}] ({vary}={value!r}): {exc}") from None
    return results
