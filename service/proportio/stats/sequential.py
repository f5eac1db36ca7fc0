"""Sequential monitoring: group-sequential boundaries and always-valid confidence sequences.

Two remedies for looking at a running comparison repeatedly:

* Group-sequential designs with error spending. ``plan_boundaries`` turns an alpha-spending function
  (Lan & DeMets 1983) into one z boundary per look by the recursive numerical integration of
  Armitage, McPherson & Rowe (1969), in the form given by Jennison & Turnbull (2000, ch. 19).
  ``analyze`` applies it statelessly to the cumulative counts seen so far, recomputing the
  boundaries at the information actually reached.
* An always-valid confidence sequence (``always_valid``): the normal-mixture boundary of Robbins,
  in the asymptotic form of Waudby-Smith et al. (2024) and Howard et al. (2021), which is the same
  statistic as the mixture sequential probability ratio test of Johari et al. (2022). It may be
  consulted after every observation without inflating the error rate.

Conventions
-----------
Statistics are oriented as treatment minus control. ``alternative`` is "two-sided" (reject when
``|Z| >= c``), "greater" (``Z >= c``) or "less" (``Z <= -c``; boundaries are reported negative).
For "two-sided" the spending function spends the *total* two-sided alpha on symmetric boundaries,
so the probability under the null of crossing either boundary at look k for the first time equals
the spending increment (Jennison & Turnbull 2000, ch. 7 convention); alpha is not split into
alpha/2 per side before the spending function is applied.

The process is standardised on the information-fraction scale: with ``t_k = I_k / I_max`` the
score process ``W(t) = Z(t) sqrt(t)`` is Brownian motion with drift ``theta`` per unit fraction,
``theta = delta sqrt(I_max)``, so ``E[Z_k] = theta sqrt(t_k)``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import optimize, special

from proportio.stats._common import as_counts, check_alpha, check_alternative, check_method, percent

SPENDING_FUNCTIONS = ("obrien-fleming-type", "pocock-type", "power-family", "hwang-shih-decani")
CLASSICAL_SHAPES = ("pocock", "obrien-fleming")
MAX_LOOKS = 50
DEFAULT_TUNING_TRIALS = 1000.0

# J&T (2000) section 19.2.1 grid size parameter: 6m - 1 nodes per look before Simpson midpoints.
# m = 32 keeps the quadrature error in crossing probabilities far below the 1e-4 bar on z.
_GRID_M = 32
# Power / drift searches repeat the whole recursion many times; m = 24 keeps power (and so the
# inflation factor) accurate to about 1e-7 at a fraction of the cost of the boundary grid.
_GRID_M_DRIFT = 24
# ndtr(-37.5) is about 1e-308: beyond this a boundary carries no representable alpha.
_Z_CAP = 37.0
_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)


# --------------------------------------------------------------------------------------------
# Result types
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Look:
    """One planned analysis of a group-sequential design.

    Attributes
    ----------
    information_fraction : float
        ``t_k``, the information at this look as a fraction of the maximum.
    z_boundary : float or None
        Efficacy boundary on the z scale: reject when ``|Z| >= z_boundary`` (two-sided),
        ``Z >= z_boundary`` (greater) or ``Z <= z_boundary`` (less, negative). ``None`` when the
        spending increment is too small to represent (the look cannot reject).
    nominal_p_value : float
        The fixed-sample p-value that corresponds to the boundary (0 when there is no boundary).
    cumulative_alpha : float
        Type I error spent up to and including this look.
    alpha_spent : float
        Type I error spent at this look.
    futility_z : float or None
        Non-binding futility boundary: stop for futility when ``Z <= futility_z`` (greater),
        ``Z >= futility_z`` (less) or ``|Z| < futility_z`` (two-sided). ``None`` when not requested
        or when no type II error is spent at this look.
    """

    information_fraction: float
    z_boundary: float | None
    nominal_p_value: float
    cumulative_alpha: float
    alpha_spent: float
    futility_z: float | None = None


@dataclass(frozen=True, slots=True)
class SequentialPlan:
    """Boundaries of a group-sequential design and its sample-size inflation factor.

    ``inflation_factor`` is the information (sample size) at the last look divided by the fixed-sample
    information giving the same ``power`` at the same alpha (Jennison & Turnbull's R). Multiply the
    fixed-sample size per group by it to get the maximum size per group.
    """

    looks: tuple[Look, ...]
    alpha: float
    alternative: str
    spending: str
    parameter: float | None
    inflation_factor: float
    warnings: tuple[str, ...]
    power: float
    futility_spending: str | None
    futility_parameter: float | None


@dataclass(frozen=True, slots=True)
class AnalyzedLook:
    """One look at the accumulating data of a running comparison.

    ``index`` is 1-based. ``z`` is the pooled two-sample z statistic for ``p_t - p_c`` and
    ``nominal_p_value`` its unadjusted (fixed-sample) p-value; ``boundary_p_value`` is the nominal
    level of the boundary. ``crossed`` says whether ``z`` reached ``z_boundary``.
    """

    index: int
    n_control: int
    n_treatment: int
    information_fraction: float
    z: float
    z_boundary: float | None
    nominal_p_value: float
    crossed: bool
    boundary_p_value: float
    cumulative_alpha: float
    difference: float


@dataclass(frozen=True, slots=True)
class SequentialAnalysis:
    """Decision of a group-sequential analysis at the latest look.

    ``decision`` is "reject-null" (a boundary was crossed; ``stopped_at`` is that look's index),
    "no-difference-detected" (the final look, information fraction 1, did not cross) or "continue".
    """

    looks: tuple[AnalyzedLook, ...]
    decision: str
    alpha: float
    alternative: str
    spending: str
    summary: str
    warnings: tuple[str, ...]
    parameter: float | None
    stopped_at: int | None


@dataclass(frozen=True, slots=True)
class AlwaysValidResult:
    """Always-valid confidence sequence and p-value for ``p_t - p_c``.

    ``tuning`` is the number of trials per group at which the sequence is tightest (the mixture
    parameter is set from it, see ``always_valid``). ``p_value`` is the always-valid p-value for
    ``null_value``: ``reject_null`` holds exactly when ``null_value`` lies outside ``[lower, upper]``.
    """

    lower: float
    upper: float
    estimate: float
    p_value: float
    reject_null: bool
    alpha: float
    tuning: float
    method: str
    summary: str
    warnings: tuple[str, ...]
    null_value: float
    z_boundary: float


# --------------------------------------------------------------------------------------------
# Spending functions
# --------------------------------------------------------------------------------------------


def _check_spending(spending: str, parameter: float | None, what: str = "spending") -> float | None:
    check_method(spending, SPENDING_FUNCTIONS, what)
    pname = "parameter" if what == "spending" else "futility_parameter"
    if spending in ("power-family", "hwang-shih-decani"):
        if parameter is None:
            sym = "rho > 0" if spending == "power-family" else "gamma"
            raise ValueError(f'{pname} is required for {what} "{spending}" ({sym})')
        if isinstance(parameter, bool):
            raise ValueError(f"{pname} must be a number")
        parameter = float(parameter)
        if not math.isfinite(parameter):
            raise ValueError(f"{pname} must be finite, got {parameter}")
        if spending == "power-family" and not parameter > 0:
            raise ValueError(f'{pname} (rho) must be positive for {what} "power-family", got {parameter}')
        return parameter
    if parameter is not None:
        raise ValueError(
            f'{pname} applies only to "power-family" and "hwang-shih-decani"; omit it for "{spending}"'
        )
    return None


def _spend(t: np.ndarray, level: float, spending: str, parameter: float | None) -> np.ndarray:
    """Evaluate a spending function of total ``level`` without argument checks."""
    t = np.clip(np.asarray(t, dtype=np.float64), 0.0, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        if spending == "obrien-fleming-type":
            z = special.ndtri(1.0 - level / 2.0)
            # 2 - 2 Phi(z / sqrt(t)) written with the upper tail so that tiny values keep precision.
            out = np.where(t > 0, 2.0 * special.ndtr(-z / np.sqrt(t)), 0.0)
        elif spending == "pocock-type":
            out = level * np.log1p((math.e - 1.0) * t)
        elif spending == "power-family":
            out = level * t**parameter
        else:
            g = float(parameter)
            if g == 0.0:
                out = level * t
            elif g > 0:
                out = level * np.expm1(-g * t) / math.expm1(-g)
            else:
                # For gamma < 0 factor out exp(-gamma) so nothing overflows for large |gamma|.
                h = -g
                out = level * np.exp(h * (t - 1.0)) * (-np.expm1(-h * t)) / (-math.expm1(-h))
    return np.clip(out, 0.0, level)


def spending_function(
    t: np.ndarray, alpha: float, spending: str, parameter: float | None = None
) -> np.ndarray:
    """Return the cumulative type I error ``alpha(t)`` spent by information fraction ``t``.

    Parameters
    ----------
    t : array_like
        Information fractions; values are clipped to [0, 1], so ``alpha(t) = alpha`` for ``t >= 1``.
    alpha : float
        Total type I error of the design, in (0, 0.5]. For a two-sided design this is the total
        two-sided error (both boundaries together).
    spending : str
        "obrien-fleming-type": ``2 - 2 Phi(z_{alpha/2} / sqrt(t))`` (Lan & DeMets 1983);
        "pocock-type": ``alpha log(1 + (e - 1) t)`` (Lan & DeMets 1983);
        "power-family": ``alpha t**rho`` (Kim & DeMets 1987);
        "hwang-shih-decani": ``alpha (1 - exp(-gamma t)) / (1 - exp(-gamma))``, linear at gamma = 0
        (Hwang, Shih & DeCani 1990).
    parameter : float, optional
        ``rho > 0`` for "power-family", ``gamma`` (any real) for "hwang-shih-decani"; required for
        those two and refused for the others.

    Returns
    -------
    numpy.ndarray
        ``alpha(t)``, non-decreasing, 0 at ``t = 0`` and ``alpha`` at ``t = 1``.

    Notes
    -----
    The same O'Brien-Fleming-type formula is used whatever the alternative: ``alpha`` is the
    design's total level. Lan & DeMets derived it from the first-passage probability of Brownian
    motion over a constant level ``z_{alpha/2}``; with a one-sided level of 0.025 it gives the widely
    tabulated one-sided boundaries 4.877, 3.357, 2.680, 2.290, 2.031 for five equal looks.

    References
    ----------
    Lan, K. K. G., DeMets, D. L. (1983). Discrete sequential boundaries for clinical trials.
    Biometrika, 70, 659-663.

    Kim, K., DeMets, D. L. (1987). Design and analysis of group sequential tests based on the type I
    error spending rate function. Biometrika, 74, 149-154.

    Hwang, I. K., Shih, W. J., DeCani, J. S. (1990). Group sequential designs using a family of type I
    error probability spending functions. Statistics in Medicine, 9, 1439-1445.
    """
    alpha = check_alpha(alpha)
    parameter = _check_spending(spending, parameter)
    t = np.asarray(t, dtype=np.float64)
    if not np.all(np.isfinite(t)) or np.any(t < 0):
        raise ValueError("t must contain finite, non-negative information fractions")
    return _spend(t, alpha, spending, parameter)


# --------------------------------------------------------------------------------------------
# Recursive numerical integration (Armitage, McPherson & Rowe 1969; Jennison & Turnbull 2000 ch. 19)
# --------------------------------------------------------------------------------------------


class _State:
    """Sub-density of Z_k on the continuation region, stored as quadrature weight x density."""

    __slots__ = ("z", "wg", "log_wg", "t")

    def __init__(self, z: np.ndarray, wg: np.ndarray, t: float) -> None:
        self.z = z
        self.wg = wg
        with np.errstate(divide="ignore"):
            self.log_wg = np.log(wg)
        self.t = t


def _start() -> _State:
    # A point mass at W(0) = 0 makes look 1 a special case of the general recursion.
    return _State(np.zeros(1), np.ones(1), 0.0)


def _simpson_grid(mean: float, lo: float, hi: float, m: int) -> tuple[np.ndarray, np.ndarray]:
    """Return Simpson nodes and weights on [lo, hi] following Jennison & Turnbull (2000) 19.2.1."""
    i = np.arange(1, 6 * m, dtype=np.float64)
    x = np.where(
        i < m,
        mean - 3.0 - 4.0 * np.log(m / i),
        np.where(
            i <= 5 * m, mean - 3.0 + 3.0 * (i - m) / (2.0 * m), mean + 3.0 + 4.0 * np.log(m / (6 * m - i))
        ),
    )
    lo_e = max(lo, x[0])
    hi_e = min(hi, x[-1])
    if not hi_e > lo_e:
        return np.empty(0), np.empty(0)
    nodes = np.concatenate(([lo_e], x[(x > lo_e) & (x < hi_e)], [hi_e]))
    d = np.diff(nodes)
    z = np.empty(2 * nodes.size - 1)
    z[0::2] = nodes
    z[1::2] = nodes[:-1] + 0.5 * d
    w = np.zeros_like(z)
    w[0:-1:2] += d / 6.0
    w[2::2] += d / 6.0
    w[1::2] = 4.0 * d / 6.0
    return z, w


def _shift(state: _State, t: float, theta: float) -> tuple[np.ndarray, float]:
    """Mean of W(t) given each node, and the sd of the increment W(t) - W(t_prev)."""
    delta = t - state.t
    return state.z * math.sqrt(state.t) + theta * delta, math.sqrt(delta)


def _logsumexp(a: np.ndarray) -> float:
    if a.size == 0:
        return -math.inf
    top = float(np.max(a))
    if top == -math.inf:
        return -math.inf
    return top + math.log(float(np.sum(np.exp(a - top))))


def _log_upper(state: _State, t: float, theta: float, c: float) -> float:
    """log P(Z_t >= c and the path continued up to the previous look)."""
    if c == math.inf:
        return -math.inf
    mu, s = _shift(state, t, theta)
    return _logsumexp(state.log_wg + special.log_ndtr((mu - c * math.sqrt(t)) / s))


def _log_lower(state: _State, t: float, theta: float, c: float) -> float:
    """log P(Z_t <= c and the path continued up to the previous look)."""
    if c == -math.inf:
        return -math.inf
    mu, s = _shift(state, t, theta)
    return _logsumexp(state.log_wg + special.log_ndtr((c * math.sqrt(t) - mu) / s))


def _prob_between(state: _State, t: float, theta: float, a: float, b: float) -> float:
    """P(a < Z_t < b and the path continued up to the previous look)."""
    mu, s = _shift(state, t, theta)
    rt = math.sqrt(t)
    hi = special.ndtr((b * rt - mu) / s) if b < math.inf else 1.0
    lo = special.ndtr((a * rt - mu) / s) if a > -math.inf else 0.0
    return float(np.sum(state.wg * np.maximum(hi - lo, 0.0)))


def _advance(
    state: _State, t: float, theta: float, intervals: Sequence[tuple[float, float]], m: int
) -> _State:
    """Sub-density of Z_t restricted to the union of ``intervals`` (the continuation region)."""
    parts = [_simpson_grid(theta * math.sqrt(t), lo, hi, m) for lo, hi in intervals]
    z = np.concatenate([p[0] for p in parts]) if parts else np.empty(0)
    w = np.concatenate([p[1] for p in parts]) if parts else np.empty(0)
    if z.size == 0 or state.z.size == 0:
        return _State(np.empty(0), np.empty(0), t)
    mu, s = _shift(state, t, theta)
    rt = math.sqrt(t)
    u = (z[:, None] * rt - mu[None, :]) / s
    # Density of Z_t at z given W(t_prev): phi(u) * sqrt(t) / s (change of variables W -> Z).
    kernel = np.exp(-0.5 * u * u - _LOG_SQRT_2PI) * (rt / s)
    g = kernel @ state.wg
    return _State(z, w * g, t)


def _solve_efficacy(state: _State, t: float, increment: float, two_sided: bool) -> float | None:
    """Boundary c whose first-crossing probability under the null equals ``increment``."""
    if not increment > 0:
        return None
    target = math.log(increment)

    def log_cross(c: float) -> float:
        lp = _log_upper(state, t, 0.0, c)
        if two_sided:
            lp = float(np.logaddexp(lp, _log_lower(state, t, 0.0, -c)))
        return lp

    if log_cross(_Z_CAP) >= target:
        return None
    lo = 0.0 if two_sided else -_Z_CAP
    if log_cross(lo) <= target:
        return lo
    return float(optimize.brentq(lambda c: log_cross(c) - target, lo, _Z_CAP, xtol=1e-11, rtol=1e-13))


def _continuation(b: float | None, a: float | None, two_sided: bool) -> list[tuple[float, float]]:
    """Continuation region between futility ``a`` and efficacy ``b`` (greater orientation)."""
    upper = math.inf if b is None else b
    if two_sided:
        if a is None or a <= 0:
            return [(-upper, upper)]
        if a >= upper:
            return []
        return [(-upper, -a), (a, upper)]
    lower = -math.inf if a is None else a
    return [(lower, upper)] if lower < upper else []


def _efficacy_boundaries(
    fractions: np.ndarray, cumulative: np.ndarray, two_sided: bool, m: int = _GRID_M
) -> tuple[list[float | None], np.ndarray]:
    """Efficacy boundaries from cumulative spending; also returns the increments actually spent."""
    state = _start()
    bounds: list[float | None] = []
    increments = np.diff(np.concatenate(([0.0], cumulative)))
    increments = np.maximum(increments, 0.0)
    for k, t in enumerate(fractions):
        c = _solve_efficacy(state, float(t), float(increments[k]), two_sided)
        bounds.append(c)
        if k < len(fractions) - 1:
            state = _advance(state, float(t), 0.0, _continuation(c, None, two_sided), m)
    return bounds, increments


def _solve_futility(
    state: _State, t: float, theta: float, b: float | None, increment: float, two_sided: bool
):
    """Futility boundary spending ``increment`` of type II error at this look (None if none)."""
    upper = math.inf if b is None else b
    if two_sided:
        if not increment > 1e-12:
            # Below this the inner wedge |Z| < a is narrower than the integration can resolve.
            return None

        def inner(a: float) -> float:
            return _prob_between(state, t, theta, -a, a) - increment

        if inner(upper if upper < math.inf else _Z_CAP) <= 0:
            return upper if upper < math.inf else None
        return float(optimize.brentq(inner, 0.0, upper if upper < math.inf else _Z_CAP, xtol=1e-11))
    if not increment > 0:
        return None
    target = math.log(increment)
    hi = upper if upper < math.inf else _Z_CAP
    if _log_lower(state, t, theta, hi) <= target:
        return upper if upper < math.inf else None
    if _log_lower(state, t, theta, -_Z_CAP) >= target:
        return None
    return float(
        optimize.brentq(
            lambda a: _log_lower(state, t, theta, a) - target, -_Z_CAP, hi, xtol=1e-11, rtol=1e-13
        )
    )


def _run(
    fractions: np.ndarray,
    bounds: Sequence[float | None],
    two_sided: bool,
    theta: float,
    beta_increments: np.ndarray | None = None,
    m: int = _GRID_M_DRIFT,
) -> tuple[np.ndarray, np.ndarray, list[float | None]]:
    """Crossing probabilities per look under drift ``theta`` (greater orientation).

    Returns the upper-crossing and lower-crossing probabilities at each look and the futility
    boundaries (solved from ``beta_increments`` when given; the last look's equals its efficacy one).
    """
    state = _start()
    k_looks = len(fractions)
    up = np.zeros(k_looks)
    low = np.zeros(k_looks)
    fut: list[float | None] = []
    for k, t in enumerate(fractions):
        t = float(t)
        b = bounds[k]
        if state.z.size == 0:
            fut.append(None)
            continue
        c = math.inf if b is None else b
        up[k] = math.exp(_log_upper(state, t, theta, c))
        if two_sided:
            low[k] = math.exp(_log_lower(state, t, theta, -c))
        a = None
        if beta_increments is not None:
            if k == k_looks - 1:
                a = b
            else:
                a = _solve_futility(state, t, theta, b, float(beta_increments[k]), two_sided)
        fut.append(a)
        if k < k_looks - 1:
            state = _advance(state, t, theta, _continuation(b, a, two_sided), m)
    return up, low, fut


def _solve_drift(
    fractions: np.ndarray,
    bounds: Sequence[float | None],
    two_sided: bool,
    power: float,
    beta_increments: np.ndarray | None,
    theta_fixed: float,
) -> float:
    """Drift at which the design rejects in the right direction with probability ``power``."""

    def excess(theta: float) -> float:
        return float(np.sum(_run(fractions, bounds, two_sided, theta, beta_increments)[0])) - power

    # No level-alpha procedure beats the fixed-sample test at t = 1, so theta >= theta_fixed.
    lo = theta_fixed * (1.0 - 1e-6)
    f_lo = excess(lo)
    if f_lo > 0:
        lo, f_lo = 0.0, excess(0.0)
    hi = max(theta_fixed, 0.5) * 1.3 / math.sqrt(float(fractions[-1]))
    f_hi = excess(hi)
    while f_hi < 0:
        lo, f_lo = hi, f_hi
        hi *= 1.6
        if hi > 200:
            raise ValueError("power cannot be reached with these boundaries")
        f_hi = excess(hi)
    return float(optimize.brentq(excess, lo, hi, xtol=1e-9, rtol=1e-12))


# --------------------------------------------------------------------------------------------
# Public planning API
# --------------------------------------------------------------------------------------------


def _check_fractions(information_fractions: Sequence[float]) -> np.ndarray:
    try:
        t = np.asarray(information_fractions, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise ValueError("information_fractions must be a list of numbers") from exc
    if t.ndim != 1 or t.size == 0:
        raise ValueError("information_fractions must be a non-empty list of numbers")
    if t.size > MAX_LOOKS:
        raise ValueError(
            f"information_fractions allows at most {MAX_LOOKS} looks, got {t.size}; "
            "for continuous monitoring use the always-valid confidence sequence"
        )
    if not np.all(np.isfinite(t)) or np.any(t <= 0) or np.any(t > 1):
        raise ValueError("information_fractions must lie in (0, 1]")
    if np.any(np.diff(t) <= 0):
        raise ValueError("information_fractions must be strictly increasing")
    return t


def _check_power(power: float, alpha: float) -> float:
    if isinstance(power, bool):
        raise ValueError("power must be a number")
    power = float(power)
    if not (0.0 < power < 1.0) or not power > alpha:
        raise ValueError(f"power must be in (alpha, 1), got {power}")
    return power


def _orient(z: float | None, alternative: str) -> float | None:
    return None if z is None else (-z if alternative == "less" else z)


def _nominal(c: float | None, two_sided: bool) -> float:
    if c is None:
        return 0.0
    return float(min(1.0, (2.0 if two_sided else 1.0) * special.ndtr(-c)))


def _theta_fixed(alpha: float, power: float, two_sided: bool) -> float:
    return float(special.ndtri(1.0 - (alpha / 2.0 if two_sided else alpha)) + special.ndtri(power))


def _inflation(t: np.ndarray, theta: float, theta_fixed: float) -> float:
    # No level-alpha procedure has more power than the fixed-sample test at the final information,
    # so R >= 1; quadrature error (~1e-7) could otherwise show 0.9999999 for designs that spend
    # almost nothing before the last look.
    return max(1.0, float(t[-1]) * (theta / theta_fixed) ** 2)


def _design(
    t: np.ndarray,
    alpha: float,
    alternative: str,
    spending: str,
    parameter: float | None,
    power: float | None,
    futility: str | None,
    futility_parameter: float | None,
    m: int = _GRID_M,
):
    """Efficacy boundaries, increments, futility boundaries and inflation factor (None if no power)."""
    two_sided = alternative == "two-sided"
    cumulative = _spend(t, alpha, spending, parameter)
    bounds, increments = _efficacy_boundaries(t, cumulative, two_sided, m)
    if power is None:
        return bounds, cumulative, increments, [None] * t.size, None
    beta_inc = None
    if futility is not None:
        beta_cum = _spend(t, 1.0 - power, futility, futility_parameter)
        beta_inc = np.maximum(np.diff(np.concatenate(([0.0], beta_cum))), 0.0)
    theta_fix = _theta_fixed(alpha, power, two_sided)
    theta = _solve_drift(t, bounds, two_sided, power, beta_inc, theta_fix)
    fut: list[float | None] = [None] * t.size
    if futility is not None:
        # Futility boundaries are solved under the drift that gives the design its power (beta spending).
        fut = _run(t, bounds, two_sided, theta, beta_inc, m)[2]
    inflation = _inflation(t, theta, theta_fix)
    return bounds, cumulative, increments, fut, inflation


def plan_boundaries(
    information_fractions: Sequence[float],
    alpha: float = 0.05,
    alternative: str = "two-sided",
    spending: str = "obrien-fleming-type",
    parameter: float | None = None,
    *,
    power: float = 0.8,
    futility: str | None = None,
    futility_parameter: float | None = None,
) -> SequentialPlan:
    """Compute group-sequential efficacy boundaries from an alpha-spending function.

    Parameters
    ----------
    information_fractions : sequence of float
        Strictly increasing fractions of the maximum information in (0, 1], at most 50. Use
        ``[k / K for k in 1..K]`` for K equally spaced looks. If the last is below 1, the alpha the
        spending function reserves for later information is left unspent (a warning says so).
    alpha : float
        Total type I error in (0, 0.5]; for "two-sided" both boundaries together.
    alternative : {"two-sided", "greater", "less"}
        "two-sided" gives symmetric boundaries ``+-c_k`` that spend the whole of ``alpha``.
    spending : str
        Spending function, see ``spending_function``.
    parameter : float, optional
        rho (power family) or gamma (Hwang-Shih-DeCani).
    power : float
        Power at which ``inflation_factor`` is computed (default 0.8): the probability of rejecting
        in the direction of the alternative (for "two-sided", crossing the upper boundary under a
        positive effect; the negligible chance of crossing the wrong boundary is not counted).
    futility : str, optional
        Spending function (same families) for optional non-binding futility boundaries spending the
        type II error ``beta = 1 - power`` under the alternative that gives the design its power.
        Non-binding: the efficacy boundaries ignore them, so the type I error stays at most ``alpha``
        whether or not they are obeyed; the inflation factor counts futility stops as failures.
    futility_parameter : float, optional
        rho or gamma for ``futility``.

    Returns
    -------
    SequentialPlan

    Notes
    -----
    Boundaries are found look by look: with the sub-density of ``Z_{k-1}`` on the continuation
    region represented on a grid (Jennison & Turnbull 2000, section 19.2, Simpson's rule on a
    grid concentrated around the mean), ``c_k`` is the root (Brent's method) of
    ``P(first crossing at look k) = alpha(t_k) - alpha(t_{k-1})``. The crossing probabilities are
    summed in log space so boundaries stay accurate where the increments are tiny (early
    O'Brien-Fleming-type looks); the z accuracy is far better than 1e-4.

    The inflation factor is ``t_K (theta / theta_fixed)**2`` where ``theta`` is the drift giving the
    design ``power`` and ``theta_fixed = z_{alpha*} + z_{1-power}`` (``alpha* = alpha/2`` two-sided)
    the fixed-sample drift (Jennison & Turnbull 2000, ch. 2, "R").

    References
    ----------
    Armitage, P., McPherson, C. K., Rowe, B. C. (1969). Repeated significance tests on accumulating
    data. Journal of the Royal Statistical Society A, 132, 235-244.

    Lan, K. K. G., DeMets, D. L. (1983). Discrete sequential boundaries for clinical trials.
    Biometrika, 70, 659-663.

    Jennison, C., Turnbull, B. W. (2000). Group Sequential Methods with Applications to Clinical
    Trials. Chapman & Hall/CRC, chapters 2, 7 and 19.
    """
    t = _check_fractions(information_fractions)
    alpha = check_alpha(alpha)
    alternative = check_alternative(alternative)
    parameter = _check_spending(spending, parameter)
    power = _check_power(power, alpha)
    if futility is not None:
        futility_parameter = _check_spending(futility, futility_parameter, "futility")
    elif futility_parameter is not None:
        raise ValueError("futility_parameter given without futility")
    two_sided = alternative == "two-sided"
    bounds, cumulative, increments, fut, inflation = _design(
        t, alpha, alternative, spending, parameter, power, futility, futility_parameter
    )
    looks = tuple(
        Look(
            information_fraction=float(t[k]),
            z_boundary=_orient(bounds[k], alternative),
            nominal_p_value=_nominal(bounds[k], two_sided),
            cumulative_alpha=float(cumulative[k]),
            alpha_spent=float(increments[k]) if bounds[k] is not None else 0.0,
            futility_z=_orient(fut[k], alternative) if not two_sided else fut[k],
        )
        for k in range(t.size)
    )
    warnings = _plan_warnings(t, alpha, cumulative, bounds)
    return SequentialPlan(
        looks=looks,
        alpha=alpha,
        alternative=alternative,
        spending=spending,
        parameter=parameter,
        inflation_factor=float(inflation),
        warnings=tuple(warnings),
        power=power,
        futility_spending=futility,
        futility_parameter=futility_parameter,
    )


def _plan_warnings(t: np.ndarray, alpha: float, cumulative: np.ndarray, bounds) -> list[str]:
    warnings = []
    if t[-1] < 1.0:
        warnings.append(
            f"the last look is at information fraction {t[-1]:.4g} < 1: {alpha - cumulative[-1]:.3g} of "
            f"alpha = {alpha:g} stays unspent, so the design is conservative"
        )
    silent = [str(k + 1) for k, b in enumerate(bounds) if b is None]
    if silent:
        warnings.append(
            f"look(s) {', '.join(silent)} spend essentially no alpha (below 1e-300) and cannot reject"
        )
    return warnings


def inflation_factor(
    information_fractions: Sequence[float],
    alpha: float = 0.05,
    power: float = 0.8,
    alternative: str = "two-sided",
    spending: str = "obrien-fleming-type",
    parameter: float | None = None,
    *,
    futility: str | None = None,
    futility_parameter: float | None = None,
) -> float:
    """Return the maximum sample size of the design relative to the fixed-sample size.

    The ratio of the information needed at the last look of the group-sequential design to the
    information of the fixed-sample test with the same alpha and power (Jennison & Turnbull's R,
    tabulated in their chapter 2 for Pocock and O'Brien-Fleming designs). The drift giving the
    design ``power`` is found by recursive integration and root finding. See ``plan_boundaries``
    for the arguments.

    References
    ----------
    Jennison, C., Turnbull, B. W. (2000). Group Sequential Methods with Applications to Clinical
    Trials. Chapman & Hall/CRC, chapter 2.
    """
    t = _check_fractions(information_fractions)
    alpha = check_alpha(alpha)
    alternative = check_alternative(alternative)
    parameter = _check_spending(spending, parameter)
    power = _check_power(power, alpha)
    if futility is not None:
        futility_parameter = _check_spending(futility, futility_parameter, "futility")
    return float(_design(t, alpha, alternative, spending, parameter, power, futility, futility_parameter)[4])


def classical_boundaries(
    information_fractions: Sequence[float],
    alpha: float = 0.05,
    alternative: str = "two-sided",
    shape: str = "pocock",
    *,
    power: float = 0.8,
) -> SequentialPlan:
    """Compute a classical group-sequential design with boundaries of a fixed shape.

    "pocock" uses the same boundary ``C_P`` at every look (Pocock 1977); "obrien-fleming" uses
    ``C_B / sqrt(t_k)`` (O'Brien & Fleming 1979), i.e. ``C_B sqrt(K / k)`` for equal spacing. The
    constant is solved so the total type I error is ``alpha``; ``cumulative_alpha`` then reports the
    error the design actually spends by each look. Mainly a reference point for spending designs.

    References
    ----------
    Pocock, S. J. (1977). Group sequential methods in clinical trials. Biometrika, 64, 191-199.

    O'Brien, P. C., Fleming, T. R. (1979). A multiple testing procedure for clinical trials.
    Biometrics, 35, 549-556.

    Jennison, C., Turnbull, B. W. (2000). Group Sequential Methods with Applications to Clinical
    Trials. Chapman & Hall/CRC, chapter 2.
    """
    t = _check_fractions(information_fractions)
    alpha = check_alpha(alpha)
    alternative = check_alternative(alternative)
    check_method(shape, CLASSICAL_SHAPES, "shape")
    power = _check_power(power, alpha)
    two_sided = alternative == "two-sided"
    scale = np.ones_like(t) if shape == "pocock" else 1.0 / np.sqrt(t)

    def size(c: float) -> np.ndarray:
        up, low, _ = _run(t, list(c * scale), two_sided, 0.0, None, _GRID_M)
        return up + low

    c = float(optimize.brentq(lambda c: float(np.sum(size(c))) - alpha, 0.0, _Z_CAP, xtol=1e-11))
    bounds = [float(c * s) for s in scale]
    spent = size(c)
    cumulative = np.cumsum(spent)
    theta_fix = _theta_fixed(alpha, power, two_sided)
    theta = _solve_drift(t, bounds, two_sided, power, None, theta_fix)
    looks = tuple(
        Look(
            information_fraction=float(t[k]),
            z_boundary=_orient(bounds[k], alternative),
            nominal_p_value=_nominal(bounds[k], two_sided),
            cumulative_alpha=float(cumulative[k]),
            alpha_spent=float(spent[k]),
        )
        for k in range(t.size)
    )
    return SequentialPlan(
        looks=looks,
        alpha=alpha,
        alternative=alternative,
        spending=shape,
        parameter=None,
        inflation_factor=_inflation(t, theta, theta_fix),
        warnings=(),
        power=power,
        futility_spending=None,
        futility_parameter=None,
    )


# --------------------------------------------------------------------------------------------
# Analysis of accumulating counts
# --------------------------------------------------------------------------------------------


def _whole(value, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        if isinstance(value, (float, np.floating)) and math.isfinite(value) and value == int(value):
            return int(value)
        raise ValueError(f"{name} must be a whole number")
    return int(value)


def _pooled_z(x_t: int, n_t: int, x_c: int, n_c: int) -> float | None:
    p_bar = (x_t + x_c) / (n_t + n_c)
    var = p_bar * (1.0 - p_bar) * (1.0 / n_t + 1.0 / n_c)
    if var <= 0.0:
        return None
    return (x_t / n_t - x_c / n_c) / math.sqrt(var)


def _observed_p(z: float, alternative: str) -> float:
    if alternative == "greater":
        return float(special.ndtr(-z))
    if alternative == "less":
        return float(special.ndtr(z))
    return float(min(1.0, 2.0 * special.ndtr(-abs(z))))


def analyze(
    looks: Sequence[tuple[int, int, int, int]],
    max_trials: int,
    alpha: float = 0.05,
    alternative: str = "two-sided",
    spending: str = "obrien-fleming-type",
    parameter: float | None = None,
) -> SequentialAnalysis:
    """Apply a spending-function design to the cumulative counts observed at each look so far.

    Parameters
    ----------
    looks : sequence of (x_t, n_t, x_c, n_c)
        Cumulative successes and trials of treatment and control at each look, in order. Counts
        may only grow, and each look must add trials.
    max_trials : int
        Planned total trials (both groups) at the final look. The information fraction of a look is
        its total trials divided by ``max_trials``, capped at 1; the look that reaches
        ``max_trials`` is the final one and no look may follow it. Looks need not follow a schedule:
        the boundaries are recomputed at the fractions actually reached, which the spending
        function allows (Lan & DeMets 1983).
    alpha, alternative, spending, parameter
        As in ``plan_boundaries``.

    Returns
    -------
    SequentialAnalysis
        z and boundary at every look and a decision: "reject-null" at the first crossing (later
        looks are still reported but the decision stands), "no-difference-detected" when the final
        look did not cross, otherwise "continue".

    Notes
    -----
    The statistic is the pooled two-sample z for ``p_t - p_c``: under the null hypothesis of equal
    rates the pooled variance is the natural one, and its score-statistic form fits the Brownian
    motion approximation that the boundaries assume (Jennison & Turnbull 2000, ch. 3). When every
    trial so far is a success (or every one a failure) the variance is zero, the difference is 0 and
    z is reported as 0. Information is approximated by the share of planned trials, which is exact
    when the rates stay near their planning values.

    References
    ----------
    Lan, K. K. G., DeMets, D. L. (1983). Discrete sequential boundaries for clinical trials.
    Biometrika, 70, 659-663.

    Jennison, C., Turnbull, B. W. (2000). Group Sequential Methods with Applications to Clinical
    Trials. Chapman & Hall/CRC, chapters 3 and 7.
    """
    alpha = check_alpha(alpha)
    alternative = check_alternative(alternative)
    parameter = _check_spending(spending, parameter)
    max_trials = _whole(max_trials, "max_trials")
    if max_trials < 2:
        raise ValueError("max_trials must be at least 2 (one trial per group)")
    if isinstance(looks, (str, bytes)) or len(looks) == 0:
        raise ValueError("looks must be a non-empty list of cumulative counts")
    if len(looks) > MAX_LOOKS:
        raise ValueError(
            f"looks allows at most {MAX_LOOKS} analyses; for continuous monitoring use the "
            "always-valid confidence sequence"
        )
    counts: list[tuple[int, int, int, int]] = []
    for i, row in enumerate(looks):
        if len(row) != 4:
            raise ValueError(
                f"looks[{i}] must be (treatment successes, treatment trials, control successes, "
                "control trials)"
            )
        x_t, n_t, x_c, n_c = (
            _whole(v, f"looks[{i}].{name}")
            for v, name in zip(
                row,
                ("treatment.successes", "treatment.trials", "control.successes", "control.trials"),
                strict=True,
            )
        )
        for x, n, g in ((x_t, n_t, "treatment"), (x_c, n_c, "control")):
            if n < 1:
                raise ValueError(f"looks[{i}].{g}.trials must be at least 1")
            if x < 0:
                raise ValueError(f"looks[{i}].{g}.successes must not be negative")
            if x > n:
                raise ValueError(f"looks[{i}].{g}.successes must not exceed looks[{i}].{g}.trials")
        if counts:
            px_t, pn_t, px_c, pn_c = counts[-1]
            for x, n, px, pn, g in ((x_t, n_t, px_t, pn_t, "treatment"), (x_c, n_c, px_c, pn_c, "control")):
                if n < pn or x < px or (n - x) < (pn - px):
                    raise ValueError(
                        f"looks[{i}].{g}: counts are cumulative and cannot decrease from the previous look"
                    )
            if n_t + n_c == pn_t + pn_c:
                raise ValueError(f"looks[{i}] adds no trials to looks[{i - 1}]")
            if pn_t + pn_c >= max_trials:
                raise ValueError(
                    f"looks[{i}] follows looks[{i - 1}], which reached max_trials and was the final look"
                )
        counts.append((x_t, n_t, x_c, n_c))

    totals = np.array([c[1] + c[3] for c in counts], dtype=np.float64)
    t = np.minimum(totals / max_trials, 1.0)
    two_sided = alternative == "two-sided"
    bounds, cumulative, _, _, _ = _design(t, alpha, alternative, spending, parameter, None, None, None)

    warnings: list[str] = []
    analyzed = []
    stopped_at = None
    degenerate = []
    small = []
    for k, (x_t, n_t, x_c, n_c) in enumerate(counts):
        z = _pooled_z(x_t, n_t, x_c, n_c)
        if z is None:
            degenerate.append(str(k + 1))
            z = 0.0
        p_bar = (x_t + x_c) / (n_t + n_c)
        if min(n_t, n_c) * min(p_bar, 1.0 - p_bar) < 5:
            small.append(str(k + 1))
        c = bounds[k]
        oriented = _orient(c, alternative)
        if c is None:
            crossed = False
        elif two_sided:
            crossed = abs(z) >= c
        elif alternative == "greater":
            crossed = z >= c
        else:
            crossed = z <= -c
        if crossed and stopped_at is None:
            stopped_at = k + 1
        analyzed.append(
            AnalyzedLook(
                index=k + 1,
                n_control=n_c,
                n_treatment=n_t,
                information_fraction=float(t[k]),
                z=float(z),
                z_boundary=oriented,
                nominal_p_value=_observed_p(z, alternative),
                crossed=bool(crossed),
                boundary_p_value=_nominal(c, two_sided),
                cumulative_alpha=float(cumulative[k]),
                difference=x_t / n_t - x_c / n_c,
            )
        )
    if degenerate:
        warnings.append(
            f"look(s) {', '.join(degenerate)}: every trial so far has the same outcome, so z is undefined "
            "and reported as 0"
        )
    if small:
        warnings.append(
            f"look(s) {', '.join(small)}: fewer than 5 expected successes or failures in a group; the normal "
            "approximation behind the boundaries is rough"
        )
    if totals[-1] > max_trials:
        warnings.append(
            f"the last look has {int(totals[-1])} trials, more than max_trials = {max_trials}; its "
            "information fraction is capped at 1 and it spends all remaining alpha"
        )
    final = t[-1] >= 1.0
    if stopped_at is not None:
        decision = "reject-null"
    elif final:
        decision = "no-difference-detected"
    else:
        decision = "continue"
    summary = _analysis_summary(analyzed, decision, stopped_at, alpha, alternative)
    return SequentialAnalysis(
        looks=tuple(analyzed),
        decision=decision,
        alpha=alpha,
        alternative=alternative,
        spending=spending,
        summary=summary,
        warnings=tuple(warnings),
        parameter=parameter,
        stopped_at=stopped_at,
    )


def _boundary_text(look: AnalyzedLook, alternative: str) -> str:
    if look.z_boundary is None:
        return "no boundary yet (no alpha is spent this early)"
    sign = "|z| >= " if alternative == "two-sided" else ("z >= " if alternative == "greater" else "z <= ")
    return f"boundary {sign}{look.z_boundary:.3f}"


def _analysis_summary(
    looks: list[AnalyzedLook], decision: str, stopped_at: int | None, alpha: float, alternative: str
) -> str:
    if decision == "reject-null":
        lk = looks[stopped_at - 1]
        direction = "is higher than" if lk.z > 0 else "is lower than"
        text = (
            f"At look {lk.index} ({percent(lk.information_fraction)} of the planned trials) z = {lk.z:.3f} "
            f"crossed the {_boundary_text(lk, alternative)}: the treatment success rate {direction} the "
            f"control rate (difference {100 * lk.difference:+.2f} percentage points) with the overall "
            f"type I error held at {alpha:g}; stop here."
        )
        if stopped_at < len(looks):
            text += " Later looks are reported but do not change this decision."
        return text
    lk = looks[-1]
    if decision == "no-difference-detected":
        return (
            f"The final look ({lk.n_treatment + lk.n_control} trials) gave z = {lk.z:.3f}, inside the "
            f"{_boundary_text(lk, alternative)}: no difference was detected at level {alpha:g} (observed "
            f"difference {100 * lk.difference:+.2f} percentage points). This does not show that the rates "
            "are equal, only that any difference was too small to detect with this many trials."
        )
    return (
        f"After {len(looks)} look(s) ({percent(lk.information_fraction)} of the planned trials) no boundary "
        f"has been crossed (latest z = {lk.z:.3f}, {_boundary_text(lk, alternative)}): continue collecting "
        "data."
    )


# --------------------------------------------------------------------------------------------
# Always-valid confidence sequence
# --------------------------------------------------------------------------------------------


def _mixture_constant(alpha: float) -> float:
    # Howard et al. (2021) / Waudby-Smith et al. (2024): rho^2 = c / t* makes the normal-mixture
    # boundary approximately tightest at t*.
    two_log = -2.0 * math.log(alpha)
    return two_log + math.log1p(two_log)


def confidence_sequence(
    x_t, n_t, x_c, n_c, alpha: float = 0.05, tuning: float | None = None, null_value: float = 0.0
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Vectorised always-valid confidence sequence for ``p_t - p_c``.

    Same construction as ``always_valid`` for arrays of counts (broadcast against each other).

    Returns
    -------
    lower, upper, estimate, p_value, z_boundary : numpy.ndarray
    """
    alpha = check_alpha(alpha)
    n_star = _check_tuning(tuning)
    null_value = float(null_value)
    if not -1.0 <= null_value <= 1.0:
        raise ValueError(f"null_value must lie in [-1, 1], got {null_value}")
    x_t, n_t = as_counts(x_t, n_t, "treatment")
    x_c, n_c = as_counts(x_c, n_c, "control")
    x_t, n_t, x_c, n_c = np.broadcast_arrays(x_t, n_t, x_c, n_c)
    estimate = x_t / n_t - x_c / n_c
    # Variances from (x + 1/2) / (n + 1): consistent, and never zero, so 0 or n successes do not
    # collapse the interval to a point.
    q_t = (x_t + 0.5) / (n_t + 1.0)
    q_c = (x_c + 0.5) / (n_c + 1.0)
    s_t = q_t * (1.0 - q_t)
    s_c = q_c * (1.0 - q_c)
    var = s_t / n_t + s_c / n_c
    # Standardised time t rho^2: trials per group of the equal-allocation design with the same
    # variance, over the tuning size, times the constant that puts the tightest point at n_star.
    n_eff = (s_t + s_c) / var
    x = n_eff / n_star * _mixture_constant(alpha)
    log_inv_alpha = -math.log(alpha)
    z_bound = np.sqrt((1.0 + x) / x * (2.0 * log_inv_alpha + np.log1p(x)))
    half = z_bound * np.sqrt(var)
    lower = np.clip(estimate - half, -1.0, 1.0)
    upper = np.clip(estimate + half, -1.0, 1.0)
    z = (estimate - null_value) / np.sqrt(var)
    log_lr = -0.5 * np.log1p(x) + 0.5 * z * z * x / (1.0 + x)
    p_value = np.exp(-np.maximum(log_lr, 0.0))
    return lower, upper, estimate, p_value, z_bound


def _check_tuning(tuning: float | None) -> float:
    if tuning is None:
        return DEFAULT_TUNING_TRIALS
    if isinstance(tuning, bool):
        raise ValueError("tuning must be a number of trials per group")
    tuning = float(tuning)
    if not (math.isfinite(tuning) and 1.0 <= tuning <= 1e12):
        raise ValueError(
            f"tuning (trials per group where the sequence is tightest) must be in [1, 1e12], got {tuning}"
        )
    return tuning


def always_valid(
    x_t: int,
    n_t: int,
    x_c: int,
    n_c: int,
    alpha: float = 0.05,
    tuning: float | None = None,
    null_value: float = 0.0,
) -> AlwaysValidResult:
    """Compute an always-valid confidence sequence and p-value for the difference ``p_t - p_c``.

    Valid however often it is consulted as data accrue: the chance that the sequence ever excludes
    the true difference, over all looks, is at most ``alpha`` (asymptotically).

    Parameters
    ----------
    x_t, n_t, x_c, n_c : int
        Cumulative successes and trials of treatment and control.
    alpha : float
        Error rate in (0, 0.5]; the sequence has coverage ``1 - alpha`` uniformly over time.
    tuning : float, optional
        Trials per group at which the sequence is tightest (default 1000). Pass the planned size per
        group. It fixes the mixing variance of the normal mixture; a poor choice costs width, never
        validity: at 100 times the tuning size the z boundary is about 17% above its value at the
        tuning size, at a hundredth of it about three times as large.
    null_value : float
        Difference tested by ``p_value`` and ``reject_null`` (default 0).

    Returns
    -------
    AlwaysValidResult

    Notes
    -----
    With the estimated variance ``V = s_t^2/n_t + s_c^2/n_c`` of ``d = p_t - p_c``, the interval is
    ``d +- u sqrt(V)`` with the normal-mixture boundary

        ``u = sqrt((1 + x) / x * (2 log(1/alpha) + log(1 + x)))``,

    where ``x = t rho^2`` is the standardised time: ``t`` is the per-group size of the equal-allocation
    comparison with variance ``V`` (``t = (s_t^2 + s_c^2) / V``, equal to n when ``n_t = n_c = n``), and
    ``rho^2 = (2 log(1/alpha) + log(1 + 2 log(1/alpha))) / tuning`` makes the boundary approximately
    tightest at ``t = tuning`` (Waudby-Smith et al. 2024, asymptotic confidence sequence; Howard et al.
    2021, normal mixture). The variances use ``(x + 1/2) / (n + 1)`` so that zero or all successes do
    not give a zero-width interval.

    The p-value is ``min(1, 1 / Lambda)`` with the mixture likelihood ratio
    ``Lambda = (1 + x)^(-1/2) exp(z^2 x / (2 (1 + x)))``, ``z = (d - null_value) / sqrt(V)``; this is the
    mixture sequential probability ratio test of Johari et al. (2022) with mixing variance
    ``x V``, and the smallest alpha at which a sequence with this mixing variance excludes
    ``null_value``. Computed from the current counts only, it needs no state; a caller that keeps
    the running minimum over looks obtains the monotone version and the same guarantee.

    References
    ----------
    Robbins, H. (1970). Statistical methods related to the law of the iterated logarithm. Annals of
    Mathematical Statistics, 41, 1397-1409.

    Howard, S. R., Ramdas, A., McAuliffe, J., Sekhon, J. (2021). Time-uniform, nonparametric,
    nonasymptotic confidence sequences. Annals of Statistics, 49, 1055-1080.

    Waudby-Smith, I., Arbour, D., Sinha, R., Kennedy, E. H., Ramdas, A. (2024). Time-uniform central
    limit theory and asymptotic confidence sequences. Annals of Statistics, 52, 2613-2640.

    Johari, R., Koomen, P., Pekelis, L., Walsh, D. (2022). Always valid inference: continuous
    monitoring of A/B tests. Operations Research, 70, 1806-1821.
    """
    for v, name in (
        (x_t, "treatment.successes"),
        (n_t, "treatment.trials"),
        (x_c, "control.successes"),
        (n_c, "control.trials"),
    ):
        _whole(v, name)
    lower, upper, estimate, p_value, z_bound = confidence_sequence(
        x_t, n_t, x_c, n_c, alpha=alpha, tuning=tuning, null_value=null_value
    )
    alpha = float(alpha)
    n_star = _check_tuning(tuning)
    lo, hi, est, p, u = (
        float(lower[0]),
        float(upper[0]),
        float(estimate[0]),
        float(p_value[0]),
        float(z_bound[0]),
    )
    reject = bool(p <= alpha)
    warnings = []
    if min(x_t, n_t - x_t, x_c, n_c - x_c) < 5:
        warnings.append(
            "a group has fewer than 5 successes or failures: the sequence rests on a normal approximation "
            "and may be anti-conservative with so few events"
        )
    level = percent(1.0 - alpha, 0 if round(100 * (1 - alpha), 9).is_integer() else 1)
    null_text = f"{100 * float(null_value):+.2f} percentage points"
    verdict = (
        f"it excludes the null difference of {null_text}, so the rates differ by more than that"
        if reject
        else f"it still contains the null difference of {null_text}, so no departure from it is shown yet"
    )
    summary = (
        f"The {level} confidence sequence for the treatment minus control success rate is "
        f"[{100 * lo:+.2f}, {100 * hi:+.2f}] percentage points (estimate {100 * est:+.2f}); {verdict} "
        f"(always-valid p = {p:.3g}). It stays valid however often it is checked."
    )
    return AlwaysValidResult(
        lower=lo,
        upper=hi,
        estimate=est,
        p_value=p,
        reject_null=reject,
        alpha=alpha,
        tuning=n_star,
        method="asymptotic confidence sequence (normal mixture)",
        summary=summary,
        warnings=tuple(warnings),
        null_value=float(null_value),
        z_boundary=u,
    )
