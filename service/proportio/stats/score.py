"""Score statistics for two independent proportions and the intervals that invert them.

Group 1 is the treatment and group 2 the control throughout: the difference is ``p1 - p2``,
the ratio ``p1 / p2`` and the odds ratio ``[p1/(1-p1)] / [p2/(1-p2)]``.

The statistic at a hypothesised value uses the maximum-likelihood estimates of the two rates
restricted to that value. Miettinen & Nurminen multiply the variance by ``N / (N - 1)`` (N the total
number of trials), which makes the variance estimate unbiased; Farrington & Manning do not. Both are
offered: ``correction=True`` is Miettinen–Nurminen (the ``score`` test and the
``miettinen-nurminen`` intervals), ``correction=False`` is Farrington–Manning, whose statistic at no
effect is exactly the pooled z statistic, so its interval is the one consistent with the pooled z-test
and the uncorrected chi-square test.

References
----------
Miettinen O, Nurminen M (1985). Comparative analysis of two rates. Statistics in Medicine 4:213-226.
Farrington CP, Manning G (1990). Test statistics and sample size formulae for comparative binomial
trials with null hypothesis of non-zero risk difference or non-unity relative risk. Statistics in
Medicine 9:1447-1454.
Newcombe RG (1998). Interval estimation for the difference between independent proportions: comparison
of eleven methods. Statistics in Medicine 17:873-890 (the start of the difference interval search).
Press WH, Teukolsky SA, Vetterling WT, Flannery BP (2007). Numerical Recipes: The Art of Scientific
Computing, 3rd ed. Cambridge University Press, section 9.4 (safeguarded Newton iteration, ``rtsafe``).
"""

from __future__ import annotations

import math

import numpy as np

from ._common import solve_decreasing

EFFECTS = ("difference", "ratio", "odds-ratio")
NO_EFFECT = {"difference": 0.0, "ratio": 1.0, "odds-ratio": 1.0}
# Brackets for the interval search on the log scale of ratios and odds ratios: exp(+-80) lies far
# beyond any limit that counts up to 10**12 can produce, so a search that ends at the edge means
# "unbounded" (or zero).
_LOG_EDGE = 80.0


def _variance_factor(n1, n2, correction: bool):
    n = n1 + n2
    if not correction:
        return np.ones_like(n)
    # N/(N-1) with N = 2 and above; N = 2 (one trial each) gives 2, still finite.
    return n / (n - 1.0)


def _difference_root(x1, n1, x2, n2, delta):
    """Return the restricted MLE of p1 under ``p1 - p2 = delta``: closed-form cubic root, then Newton.

    The closed form (Farrington & Manning 1990, p. 1451, theta = n2/n1) evaluates arccos near +-1 for
    rare events, which costs about sqrt(machine epsilon) of absolute precision (1e-8 absolute is 100 % at a
    rate of 1e-8). Newton steps on the likelihood equation restore full relative precision; where they do not
    settle within three steps (or would leave the feasible interval) the root is bracketed and solved with
    :func:`solve_decreasing` instead, which also finds roots on the edge of the interval.
    """
    theta = n2 / n1
    r1 = x1 / n1
    r2 = x2 / n2
    a = 1.0 + theta
    b = -(1.0 + theta + r1 + theta * r2 + delta * (theta + 2.0))
    c = delta * delta + delta * (2.0 * r1 + theta + 1.0) + r1 + theta * r2
    d = -r1 * delta * (1.0 + delta)
    b3a = b / (3.0 * a)
    v = b3a * b3a * b3a - b * c / (6.0 * a * a) + d / (2.0 * a)
    u = np.where(v >= 0, 1.0, -1.0) * np.sqrt(np.maximum(b3a * b3a - c / (3.0 * a), 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        cos_arg = np.where(u != 0, v / np.where(u != 0, u * u * u, 1.0), 0.0)
    w = (np.pi + np.arccos(np.clip(cos_arg, -1.0, 1.0))) / 3.0
    lo = np.maximum(0.0, delta)
    hi = np.minimum(1.0, 1.0 + delta)
    p1 = np.clip(2.0 * u * np.cos(w) - b3a, lo, hi)
    f1 = n1 - x1
    f2 = n2 - x2

    def score(p):
        # Derivative of the log-likelihood in p1; terms with a zero count vanish (no 0/0).
        p2 = p - delta
        return (np.where(x1 > 0, x1 / p, 0.0) - np.where(f1 > 0, f1 / (1.0 - p), 0.0)
                + np.where(x2 > 0, x2 / p2, 0.0) - np.where(f2 > 0, f2 / (1.0 - p2), 0.0))

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        g = score(p1)
        # The log-likelihood is concave in p1, so its derivative decreases: a clipped root whose score
        # still points inwards is an interior root that rounding pushed onto the edge.
        flagged = ((p1 <= lo) & (g > 0)) | ((p1 >= hi) & (g < 0))
        change = np.zeros(np.shape(p1))
        for _ in range(3):
            p2 = p1 - delta
            dg = -(np.where(x1 > 0, x1 / (p1 * p1), 0.0) + np.where(f1 > 0, f1 / ((1.0 - p1) ** 2), 0.0)
                   + np.where(x2 > 0, x2 / (p2 * p2), 0.0) + np.where(f2 > 0, f2 / ((1.0 - p2) ** 2), 0.0))
            step = p1 - g / dg
            ok = np.isfinite(step) & (step > lo) & (step < hi)
            # A step that would leave the interval from inside means the start was far off (or the
            # root is on the edge): count it as not converged.
            change = np.where(ok, np.abs(step - p1), np.where((p1 > lo) & (p1 < hi) & (g != 0), np.inf, 0.0))
            p1 = np.where(ok, step, p1)
            g = score(p1)
        # Newton converges quadratically from a good start; one still moving after three steps started
        # far off (the closed form can be wrong by 100 % for rates near 1e-9): solve it by bracketing.
        flagged = np.broadcast_to(flagged | (change > 1e-12 * np.maximum(np.minimum(p1, 1.0 - p1), 1e-300)),
                                  np.shape(p1))
        if np.any(flagged):
            p1 = np.array(np.broadcast_to(p1, flagged.shape), copy=True)
            # Most of these have their root on an edge, which the sign of the score there tells at once.
            at_lo = flagged & (np.broadcast_to(score(lo), flagged.shape) <= 0)
            at_hi = flagged & ~at_lo & (np.broadcast_to(score(hi), flagged.shape) >= 0)
            p1 = np.where(at_lo, np.broadcast_to(lo, flagged.shape), p1)
            p1 = np.where(at_hi, np.broadcast_to(hi, flagged.shape), p1)
            flagged = flagged & ~at_lo & ~at_hi
        if np.any(flagged):
            idx = np.flatnonzero(flagged)
            sx1, sf1, sx2, sf2, sd, slo, shi = (np.broadcast_to(arr, flagged.shape).ravel()[idx]
                                                 for arr in (x1, f1, x2, f2, delta, lo, hi))

            def sub_score(p, i):
                p2 = p - sd[i]
                return (np.where(sx1[i] > 0, sx1[i] / p, 0.0)
                        - np.where(sf1[i] > 0, sf1[i] / (1.0 - p), 0.0)
                        + np.where(sx2[i] > 0, sx2[i] / p2, 0.0)
                        - np.where(sf2[i] > 0, sf2[i] / (1.0 - p2), 0.0))

            p1.ravel()[idx] = solve_decreasing(sub_score, slo, shi)
    return p1


def restricted_rates_difference_full(x1, n1, x2, n2, delta):
    """Return (p1, p2, 1 - p1, 1 - p2) of the MLE restricted to ``p1 - p2 = delta``.

    Where successes are the majority the problem is solved for the failure rates (difference
    ``-delta``), so that the small one of each rate and its complement is the one computed directly.
    Farrington & Manning (1990); statsmodels 0.15 ``score_test_proportions_2indep`` solves an
    algebraically rearranged cubic that picks an infeasible root on some inputs (for example 7/50 vs
    1/77 at a difference of -0.418); this one agrees with a direct maximisation of the likelihood
    (tests/reference/test_score.py).
    """
    return _restricted_difference(x1, n1, x2, n2, delta)[:4]


def _restricted_difference(x1, n1, x2, n2, delta):
    """Return :func:`restricted_rates_difference_full` followed by the problem actually solved.

    The extra items are ``(s1, s2, xs1, xs2, ds)``: the restricted rates of the outcome that is in the
    minority (successes, or failures where ``mirror``), the counts of that outcome and its difference.
    """
    delta = np.asarray(delta, dtype=np.float64)
    mirror = (x1 + x2) > 0.5 * (n1 + n2)
    xs1 = np.where(mirror, n1 - x1, x1)
    xs2 = np.where(mirror, n2 - x2, x2)
    ds = np.where(mirror, -delta, delta)
    s1 = _difference_root(xs1, n1, xs2, n2, ds)
    s2 = np.clip(s1 - ds, 0.0, 1.0)
    c1 = 1.0 - s1
    c2 = 1.0 - s2
    return (np.where(mirror, c1, s1), np.where(mirror, c2, s2),
            np.where(mirror, s1, c1), np.where(mirror, s2, c2), s1, s2, xs1, xs2, ds)


def restricted_rates_difference(x1, n1, x2, n2, delta):
    """Return the MLE of (p1, p2) subject to ``p1 - p2 = delta``."""
    p1, p2, _, _ = restricted_rates_difference_full(x1, n1, x2, n2, delta)
    return p1, p2


def restricted_rates_ratio(x1, n1, x2, n2, ratio):
    """Return the MLE of (p1, p2) subject to ``p1 / p2 = ratio`` (quadratic root).

    Miettinen & Nurminen (1985), Appendix.
    """
    ratio = np.asarray(ratio, dtype=np.float64)
    a = (n1 + n2) * ratio
    b = -(ratio * (n1 + x2) + x1 + n2)
    c = x1 + x2
    disc = np.sqrt(np.maximum(b * b - 4.0 * a * c, 0.0))
    # The smaller root, written as c / q to avoid cancellation (b < 0 always).
    q = 0.5 * (-b + disc)
    with np.errstate(divide="ignore", invalid="ignore"):
        p2 = np.where(q > 0, c / np.where(q > 0, q, 1.0), 0.0)
    p2 = np.clip(p2, 0.0, np.minimum(1.0, 1.0 / ratio))
    p1 = np.clip(p2 * ratio, 0.0, 1.0)
    return p1, p2


def _or_control_rate(x1, n1, x2, n2, odds_ratio):
    """Return the restricted MLE of p2 under the odds ratio (p1 odds / p2 odds) ``odds_ratio``.

    The positive root is taken in whichever of its two algebraic forms avoids cancellation, which
    also covers ``odds_ratio == 1`` (the pooled rate).
    """
    psi = np.asarray(odds_ratio, dtype=np.float64)
    m = x1 + x2
    a = n2 * (psi - 1.0)
    b = n1 * psi + n2 - m * (psi - 1.0)
    c = -m
    disc = np.sqrt(np.maximum(b * b - 4.0 * a * c, 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        stable = np.where(b + disc > 0, -2.0 * c / np.where(b + disc > 0, b + disc, 1.0), 0.0)
        direct = (-b + disc) / (2.0 * np.where(a != 0, a, 1.0))
    return np.clip(np.where(b >= 0, stable, direct), 0.0, 1.0)


def restricted_rates_odds_ratio(x1, n1, x2, n2, odds_ratio):
    """Return the MLE of (p1, p2) subject to the odds ratio ``odds_ratio`` (quadratic root).

    Miettinen & Nurminen (1985), Appendix. Each rate is the root of its own quadratic (the second is
    the first with the groups swapped and the odds ratio inverted) rather than one derived from the
    other, which would lose all precision when the other rate rounds to 1 at extreme odds ratios.
    """
    p1, p2, _, _ = restricted_rates_odds_ratio_full(x1, n1, x2, n2, odds_ratio)
    return p1, p2


def restricted_rates_odds_ratio_full(x1, n1, x2, n2, odds_ratio):
    """Return (p1, p2, 1 - p1, 1 - p2), each from its own quadratic (failures: odds ratio inverted)."""
    psi = np.asarray(odds_ratio, dtype=np.float64)
    with np.errstate(divide="ignore", over="ignore"):
        inv = 1.0 / psi
    p1 = _or_control_rate(x2, n2, x1, n1, inv)
    p2 = _or_control_rate(x1, n1, x2, n2, psi)
    q1 = _or_control_rate(n2 - x2, n2, n1 - x1, n1, psi)
    q2 = _or_control_rate(n1 - x1, n1, n2 - x2, n2, inv)
    return p1, p2, q1, q2


def score_statistic(x1, n1, x2, n2, value, effect: str = "difference", correction: bool = True):
    """Return the score z statistic for H0: effect = ``value`` (positive when the data exceed it).

    Where the restricted variance is zero the statistic is 0 if the data sit exactly at the
    hypothesised value and +-inf otherwise; callers treat infinities as "beyond any critical value".
    """
    p1 = x1 / n1
    p2 = x2 / n2
    factor = _variance_factor(n1, n2, correction)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if effect == "difference":
            q1, q2, c1, c2 = restricted_rates_difference_full(x1, n1, x2, n2, value)
            num = p1 - p2 - value
            var = (q1 * c1 / n1 + q2 * c2 / n2) * factor
            z = num / np.sqrt(var)
            exact_zero = (x1 * n2 - x2 * n1 == value * n1 * n2) if np.ndim(value) == 0 else num == 0
        elif effect == "ratio":
            q1, q2 = restricted_rates_ratio(x1, n1, x2, n2, value)
            num = p1 - value * p2
            var = (q1 * (1.0 - q1) / n1 + value**2 * q2 * (1.0 - q2) / n2) * factor
            z = num / np.sqrt(var)
            exact_zero = num == 0
        elif effect == "odds-ratio":
            q1, q2, c1, c2 = restricted_rates_odds_ratio_full(x1, n1, x2, n2, value)
            # The restricted fit keeps the total number of successes (a sufficient statistic of the
            # logistic model), so the Miettinen-Nurminen numerator reduces to e * W with the residual
            # e = x1 - n1*q1 = n2*q2 - x2 = n1*c1 - (n1 - x1) = (n2 - x2) - n2*c2 and W the variance
            # below: z = e * sqrt(W / factor). Of the four equal forms the one whose two terms are
            # smallest is computed, so e keeps its relative precision when it is tiny.
            forms = np.stack(np.broadcast_arrays(x1 - n1 * q1, n2 * q2 - x2, n1 * c1 - (n1 - x1),
                                                 (n2 - x2) - n2 * c2))
            sizes = np.stack(np.broadcast_arrays(np.maximum(x1, n1 * q1), np.maximum(x2, n2 * q2),
                                                 np.maximum(n1 - x1, n1 * c1), np.maximum(n2 - x2, n2 * c2)))
            num = np.take_along_axis(forms, np.argmin(sizes, axis=0)[None], axis=0)[0]
            w = 1.0 / (n1 * q1 * c1) + 1.0 / (n2 * q2 * c2)
            z = num * np.sqrt(w / factor)
            exact_zero = num == 0
        else:
            raise ValueError(f'effect "{effect}" not recognized; use difference, ratio or odds-ratio')
    num = np.broadcast_to(num, np.shape(z))
    exact_zero = np.broadcast_to(exact_zero, np.shape(z))
    bad = ~np.isfinite(z)
    z = np.where(bad & exact_zero, 0.0, z)
    z = np.where(bad & ~exact_zero, np.copysign(np.inf, num), z)
    return z


def score_interval(x1, n1, x2, n2, z_lower, z_upper, effect: str = "difference", correction: bool = True):
    """Invert the score test: return (lower, upper) where the statistic equals the critical values.

    ``z_lower`` is the critical value for the lower limit (the limit solves ``z(value) = z_lower``) and
    ``z_upper`` for the upper limit (``z(value) = -z_upper``); pass ``np.inf`` to leave a side open.
    The statistic decreases in the hypothesised value, so each limit is the root of a monotone function
    between the estimate and the edge of the parameter space: for the difference a safeguarded Newton
    iteration (:func:`_scalar_limit`), for ratios :func:`solve_decreasing` on the log scale. A limit that
    reaches the edge is returned as the edge (-1 or 1 for the difference; 0 or ``inf`` for ratios). The
    answer is exact to a few units in the last place of the value.
    """
    x1, n1, x2, n2 = (np.asarray(a, dtype=np.float64) for a in (x1, n1, x2, n2))
    shape = x1.shape
    z_lower, z_upper = (np.asarray(z, dtype=np.float64) for z in (z_lower, z_upper))
    # broadcast_to costs microseconds even when there is nothing to broadcast, as in every call of the core.
    if z_lower.shape != shape:
        z_lower = np.broadcast_to(z_lower, shape)
    if z_upper.shape != shape:
        z_upper = np.broadcast_to(z_upper, shape)
    fx1, fn1, fx2, fn2 = (a.ravel() for a in (x1, n1, x2, n2))
    zl, zu = z_lower.ravel(), z_upper.ravel()

    if effect == "difference":
        if fx1.size <= _SCALAR_LIMIT:
            lower, upper = _scalar_difference_interval(fx1, fn1, fx2, fn2, zl, zu, correction)
        else:
            lower, upper = _difference_interval(fx1, fn1, fx2, fn2, zl, zu, correction)
        return lower.reshape(shape), upper.reshape(shape)

    if effect not in ("ratio", "odds-ratio"):
        raise ValueError(f'effect "{effect}" not recognized; use difference, ratio or odds-ratio')

    p1 = x1 / n1
    p2 = x2 / n2

    def stat_log(t, idx):
        return score_statistic(fx1[idx], fn1[idx], fx2[idx], fn2[idx], np.exp(t), effect, correction)

    with np.errstate(divide="ignore", invalid="ignore"):
        if effect == "ratio":
            est = p1 / p2
        else:
            est = (p1 * (1.0 - p2)) / (p2 * (1.0 - p1))
    est = est.ravel()
    # Where the estimate is 0, infinite or undefined (0/0) the search runs over the whole line.
    log_est = np.where(np.isfinite(est) & (est > 0), np.log(np.where(est > 0, est, 1.0)), np.nan)
    lo_edge = np.full_like(est, -_LOG_EDGE)
    hi_edge = np.full_like(est, _LOG_EDGE)
    mid_lower = np.where(np.isnan(log_est), np.where(np.isinf(est), hi_edge, lo_edge), log_est)
    mid_upper = np.where(np.isnan(log_est), np.where(est == 0, lo_edge, hi_edge), log_est)
    # 0/0 estimates (no information on the scale): both searches span the whole line.
    undefined = np.isnan(est)
    mid_lower = np.where(undefined, hi_edge, mid_lower)
    mid_upper = np.where(undefined, lo_edge, mid_upper)
    t_low = solve_decreasing(lambda t, i: stat_log(t, i) - zl[i], lo_edge, mid_lower).reshape(shape)
    t_upp = solve_decreasing(lambda t, i: stat_log(t, i) + zu[i], mid_upper, hi_edge).reshape(shape)
    lower = np.where(t_low <= -_LOG_EDGE + 1e-9, 0.0, np.exp(t_low))
    upper = np.where(t_upp >= _LOG_EDGE - 1e-9, np.inf, np.exp(t_upp))
    # An undefined estimate (0/0: no successes at all for a ratio; every trial with the same outcome for
    # an odds ratio) carries no information on this scale: the interval is the whole range.
    undefined = undefined.reshape(shape)
    lower = np.where(np.isinf(z_lower) | undefined, 0.0, lower)
    upper = np.where(np.isinf(z_upper) | undefined, np.inf, upper)
    return lower, upper


# ------------------------------------------------------------------------------------------------
# The difference interval: safeguarded Newton iteration from a close start
#
# Each limit solves z(value) = target, where z = (d - value) / sqrt(V(value)) is the score statistic, which
# decreases in the hypothesised value: the lower limit lies in [-1, estimate] (target z_lower), the upper in
# [estimate, 1] (target -z_upper). Both the array code and the float code below run the iteration of
# _scalar_limit with the same floating-point operations in the same order, so that a comparison gets the
# same limits to the last bit whichever path computes it.

# Evaluations allowed per limit; 1-3 are typical and about 60 the most seen (critical values near 1e-8).
# The cap only bounds pathological inputs, where halving still shrinks the bracket every second step.
_MAX_EVALUATIONS = 100
# A Newton point is accepted once its predicted error is below this fraction of the larger of |limit| and
# |estimate| (2**-52: a unit in the last place at that scale).
_ACCURACY = 2.0**-52


def _difference_interval(x1, n1, x2, n2, z_lower, z_upper, correction: bool):
    """Return (lower, upper) of the difference for 1-d arrays: both limits of every comparison in one search.

    The lower limit solves ``z(value) - z_lower = 0`` and the upper ``z(value) + z_upper = 0``; the two are
    stacked into one call of :func:`_newton_limits`, which works element by element, so stacking changes no
    result and halves the number of (fixed-cost) array operations. A side left open (infinite critical
    value) is the edge whatever its search would find, so it is not searched; a critical value of 0 or below
    gives the estimate itself, where the statistic is 0 (its search interval ends there).
    """
    est = x1 / n1 - x2 / n2
    size = est.shape[0]
    target = np.concatenate((z_lower, -z_upper))
    sign = np.concatenate((np.ones(size), -np.ones(size)))  # +1: lower limit, -1: upper limit
    lo = np.concatenate((np.full(size, -1.0), est))
    hi = np.concatenate((est, np.full(size, 1.0)))
    rows = np.concatenate((np.arange(size), np.arange(size)))
    searched = ~np.isinf(target)
    if not searched.all():
        target, sign, lo, hi, rows = (arr[searched] for arr in (target, sign, lo, hi, rows))
    sx1, sn1, sx2, sn2, sest = x1[rows], n1[rows], x2[rows], n2[rows], est[rows]
    critical = sign * target
    closed = critical <= 0.0
    lo = np.where(closed, sest, lo)
    hi = np.where(closed, sest, hi)
    start = _difference_start(sx1, sn1, sx2, sn2, critical, sign)

    def evaluate(v, idx):
        return _difference_score_terms(sx1[idx], sn1[idx], sx2[idx], sn2[idx], v, correction)

    roots = np.clip(_newton_limits(evaluate, target, lo, hi, start, sest), -1.0, 1.0)
    limits = np.concatenate((np.full(size, -1.0), np.full(size, 1.0)))
    limits[np.flatnonzero(searched)] = roots
    return limits[:size], limits[size:]


def _difference_start(x1, n1, x2, n2, critical, sign):
    """Return the start of the search for each limit (arrays): Newcombe's hybrid score limit.

    Newcombe (1998), method 10: the distance from the estimate to the limit is the root of the sum of the
    squared distances from each rate to its Wilson limit on the side that moves the difference that way
    (``sign`` +1 for the lower limit, -1 for the upper). Each Wilson limit is written as the rate plus the
    offset ``m`` of the Wilson centre from it plus or minus the half-width ``h``, which has no cancellation
    for rates of 0 or 1. It is close to the score limit wherever the rates are far from 0 and 1 and still
    within some 40 % of the half-width where a count is 0 or all. A start that is undefined (overflowing
    critical values) becomes the middle of the bracket. :func:`_scalar_difference_problem` repeats these
    operations.
    """
    p1 = x1 / n1
    p2 = x2 / n2
    with np.errstate(invalid="ignore", over="ignore"):
        squared = critical * critical
        m1 = squared * (0.5 - p1) / (n1 + squared)
        m2 = squared * (0.5 - p2) / (n2 + squared)
        h1 = critical * np.sqrt(n1 * p1 * (1.0 - p1) + 0.25 * squared) / (n1 + squared)
        h2 = critical * np.sqrt(n2 * p2 * (1.0 - p2) + 0.25 * squared) / (n2 + squared)
        d1 = h1 - sign * m1
        d2 = h2 + sign * m2
        return (p1 - p2) - sign * np.sqrt(d1 * d1 + d2 * d2)


def _difference_score_terms(x1, n1, x2, n2, value, correction: bool):
    """Return ``(d - value, V, dV/dvalue)`` of the score statistic ``z = (d - value) / sqrt(V)`` (arrays).

    ``V`` is the restricted variance of :func:`score_statistic`, to the bit. Its slope follows from that of
    the restricted MLE: differentiating the likelihood equation ``g(p1; value) = 0`` gives
    ``dp1/dvalue = B / (A + B)``, where ``A`` and ``B`` are the negated second derivatives of the two
    groups' log-likelihoods (``A = x1/p1**2 + (n1-x1)/(1-p1)**2``, likewise ``B``), and
    ``dp2/dvalue = dp1/dvalue - 1``; a rate held on an edge of the parameter space does not move (slope 0,
    or 1 when it is the control rate that is held).
    """
    p1 = x1 / n1
    p2 = x2 / n2
    factor = _variance_factor(n1, n2, correction)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        q1, q2, c1, c2, s1, s2, xs1, xs2, ds = _restricted_difference(x1, n1, x2, n2, value)
        num = p1 - p2 - value
        var = (q1 * c1 / n1 + q2 * c2 / n2) * factor
        # Curvatures of the problem solved (the outcome in the minority); terms with a zero count vanish.
        e1 = 1.0 - s1
        e2 = 1.0 - s2
        fs1 = n1 - xs1
        fs2 = n2 - xs2
        curv1 = np.where(xs1 > 0, xs1 / (s1 * s1), 0.0) + np.where(fs1 > 0, fs1 / (e1 * e1), 0.0)
        curv2 = np.where(xs2 > 0, xs2 / (s2 * s2), 0.0) + np.where(fs2 > 0, fs2 / (e2 * e2), 0.0)
        inside = (s1 > np.maximum(0.0, ds)) & (s1 < np.minimum(1.0, 1.0 + ds))
        # d q1 / d value; the same in the mirrored problem (both signs flip).
        w = np.where(inside, curv2 / (curv1 + curv2), np.where((s1 <= 0.0) | (s1 >= 1.0), 0.0, 1.0))
        dvar = ((c1 - q1) * w / n1 + (c2 - q2) * (w - 1.0) / n2) * factor
    return num, var, dvar


def _newton_limits(evaluate, target, lo, hi, x, est):
    """Solve ``z(value) = target`` for each element in ``[lo, hi]``: :func:`_scalar_limit` on arrays.

    ``evaluate(value, idx)`` returns :func:`_difference_score_terms` for the elements ``idx``; ``x`` holds the
    starts and ``est`` the estimates (the scale of the accuracy). Every element runs the float iteration of
    :func:`_scalar_limit` step for step (same operations, same order, same decisions); work shrinks to the
    elements still searching.
    """
    a = np.array(lo, dtype=np.float64, copy=True)
    b = np.array(hi, dtype=np.float64, copy=True)
    signed_square = target * np.abs(target)
    result = np.empty(a.size)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x = np.where((a < x) & (x < b), x, 0.5 * (a + b))
        last = b - a
        before = last.copy()
        newton_last = np.zeros(a.size, dtype=bool)
        positive_last = np.zeros(a.size, dtype=bool)
        closed = ~(a < b)
        result[closed] = a[closed]
        idx = np.flatnonzero(~closed)
        for _ in range(_MAX_EVALUATIONS):
            if idx.size == 0:
                break
            xi = x[idx]
            num, var, dvar = evaluate(xi, idx)
            t2 = signed_square[idx]
            size = np.abs(num)
            f = num - t2 * var / size
            slope = -1.0 - t2 * (dvar + var / num) / size
            positive = f > 0.0
            ai = np.where(positive, xi, a[idx])
            bi = np.where(positive, b[idx], xi)
            step = f / slope
            following = xi - step
            error = np.abs(step)
            ratio = step / last[idx]
            ratio = ratio * ratio
            quadratic = newton_last[idx] & (positive == positive_last[idx]) & (ratio < 1.0)
            error = np.where(quadratic, error * ratio, error)
            accept = ((ai <= following) & (following <= bi)
                      & (error <= _ACCURACY * np.maximum(np.abs(following), np.abs(est[idx]))))
            newton = (ai < following) & (following < bi) & (np.abs(step) <= 0.5 * np.abs(before[idx]))
            middle = 0.5 * (ai + bi)
            narrow = ~(bi - ai > 4.0 * np.spacing(np.maximum(np.abs(ai), np.abs(bi))))
            exact = f == 0.0
            done = exact | accept | narrow
            result[idx[done]] = np.where(exact, xi, np.where(accept, following, middle))[done]
            nudged = np.where(following == bi, np.nextafter(bi, ai),
                              np.where(following == ai, np.nextafter(ai, bi), middle))
            fallback = np.where((ai < nudged) & (nudged < bi), nudged, middle)
            following = np.where(newton, following, fallback)
            step = np.where(newton, step, xi - following)
            a[idx], b[idx], x[idx] = ai, bi, following
            before[idx] = last[idx]
            last[idx] = step
            newton_last[idx] = newton
            positive_last[idx] = positive
            idx = idx[~done]
        result[idx] = 0.5 * (a[idx] + b[idx])
    return result


# ------------------------------------------------------------------------------------------------
# The difference interval of a few comparisons, with Python floats
#
# The array code above spends nearly all its time in numpy's fixed cost per call (about a microsecond,
# whatever the length): a statistic is a restricted MLE of a few hundred array operations. The same
# operations on Python floats take about a twentieth of that. They are the array code's operations in the
# array code's order, so the results are identical: +, -, *, / and square roots are correctly rounded in
# both, numpy's ``x ** 2`` is ``x * x``, and arccos and cos are numpy's own (called on a float they run the
# loop an array runs). Only comparisons whose every restricted MLE stays strictly inside the parameter space
# on the first try are computed here; any other (a count of 0 or all, a root on an edge, a Newton start
# that does not settle, a division by zero) is handed back to the array code, which has the branches for
# those.

_SCALAR_LIMIT = 32


class _Edge(Exception):
    """The scalar path met a case it leaves to the array code."""


def _scalar_difference_problem(x1: float, n1: float, x2: float, n2: float, correction: bool):
    """Return ``(evaluate, start)`` for one table with floats.

    ``evaluate(value)`` is :func:`_difference_score_terms` and ``start(critical, sign)`` is
    :func:`_difference_start`. Counts must satisfy ``0 < x < n`` in both groups.
    ``evaluate`` raises :class:`_Edge` wherever the array code would take a branch this one does not have
    (a root on or beyond an edge, Newton steps that leave the feasible interval or do not settle, a
    variance that is not positive). What does not depend on the hypothesised value is computed once, with
    the operations, in the order, of :func:`_difference_root`.
    """
    p1_hat = x1 / n1
    p2_hat = x2 / n2
    observed = p1_hat - p2_hat
    factor = _variance_factor(n1, n2, correction) if correction else 1.0
    # restricted_rates_difference_full: successes in the majority are solved as failures (difference -value).
    mirror = (x1 + x2) > 0.5 * (n1 + n2)
    s1, s2 = (n1 - x1, n2 - x2) if mirror else (x1, x2)
    t1, t2 = n1 - s1, n2 - s2  # the other outcome of each group
    theta = n2 / n1
    r1 = s1 / n1
    r2 = s2 / n2
    a = 1.0 + theta
    b0 = 1.0 + theta + r1 + theta * r2
    b1 = theta + 2.0
    c1 = 2.0 * r1 + theta + 1.0
    tr2 = theta * r2
    minus_r1 = -r1
    a3 = 3.0 * a
    a6 = 6.0 * a * a
    a2 = 2.0 * a
    arccos = np.arccos
    cos = np.cos
    pi = math.pi

    def root(delta: float) -> tuple[float, float]:
        # _difference_root: the closed form (trigonometric cubic root), then three Newton steps; also the
        # slope of the root in delta (_difference_score_terms).
        b = -(b0 + delta * b1)
        c = delta * delta + delta * c1 + r1 + tr2
        d = minus_r1 * delta * (1.0 + delta)
        b3a = b / a3
        v = b3a * b3a * b3a - b * c / a6 + d / a2
        radicand = b3a * b3a - c / a3
        if not radicand > 0.0:  # also NaN
            raise _Edge
        u = (1.0 if v >= 0 else -1.0) * math.sqrt(radicand)
        cos_arg = v / (u * u * u)
        # min(max(cos_arg, -1.0), 1.0), max(0.0, delta), min(1.0, 1.0 + delta), without the builtin calls.
        clipped = -1.0 if -1.0 > cos_arg else cos_arg
        clipped = 1.0 if 1.0 < clipped else clipped
        w = (pi + float(arccos(clipped))) / 3.0
        lo = delta if delta > 0.0 else 0.0
        hi = 1.0 + delta if 1.0 + delta < 1.0 else 1.0
        p = 2.0 * u * float(cos(w)) - b3a
        if not lo < p < hi:  # clipped onto an edge, or NaN
            raise _Edge
        # Every count is positive, so no term of the score drops out.
        q = p - delta
        g = s1 / p - t1 / (1.0 - p) + s2 / q - t2 / (1.0 - q)
        for _ in range(3):
            q = p - delta
            e1 = 1.0 - p
            e2 = 1.0 - q
            dg = -(s1 / (p * p) + t1 / (e1 * e1) + s2 / (q * q) + t2 / (e2 * e2))
            step = p - g / dg
            if not (math.isfinite(step) and lo < step < hi):
                raise _Edge
            change = abs(step - p)
            p = step
            q = p - delta
            g = s1 / p - t1 / (1.0 - p) + s2 / q - t2 / (1.0 - q)
            if change == 0.0:
                # A fixed point: the remaining steps would repeat this one exactly (same p, g and step), so
                # stopping gives the array code's value to the last bit. Happens at the second step in
                # about half the calls.
                break
        if change > 1e-12 * max(min(p, 1.0 - p), 1e-300):
            raise _Edge
        e1 = 1.0 - p
        e2 = 1.0 - q
        curv1 = s1 / (p * p) + t1 / (e1 * e1)
        curv2 = s2 / (q * q) + t2 / (e2 * e2)
        return p, curv2 / (curv1 + curv2)

    def evaluate(value: float) -> tuple[float, float]:
        if mirror:
            m1, w = root(-value)
            m2 = m1 - -value  # then clipped to [0, 1], as min(max(m2, 0.0), 1.0) would
            m2 = 1.0 if 1.0 < m2 else 0.0 if 0.0 > m2 else m2
            q1, q2, c1_, c2_ = 1.0 - m1, 1.0 - m2, m1, m2
        else:
            m1, w = root(value)
            m2 = m1 - value
            m2 = 1.0 if 1.0 < m2 else 0.0 if 0.0 > m2 else m2
            q1, q2, c1_, c2_ = m1, m2, 1.0 - m1, 1.0 - m2
        var = (q1 * c1_ / n1 + q2 * c2_ / n2) * factor
        if not var > 0.0:
            raise _Edge
        dvar = ((c1_ - q1) * w / n1 + (c2_ - q2) * (w - 1.0) / n2) * factor
        return observed - value, var, dvar

    def start(critical: float, sign: float) -> float:
        squared = critical * critical
        m1 = squared * (0.5 - p1_hat) / (n1 + squared)
        m2 = squared * (0.5 - p2_hat) / (n2 + squared)
        h1 = critical * math.sqrt(n1 * p1_hat * (1.0 - p1_hat) + 0.25 * squared) / (n1 + squared)
        h2 = critical * math.sqrt(n2 * p2_hat * (1.0 - p2_hat) + 0.25 * squared) / (n2 + squared)
        d1 = h1 - sign * m1
        d2 = h2 + sign * m2
        return observed - sign * math.sqrt(d1 * d1 + d2 * d2)

    return evaluate, start


def _scalar_limit(evaluate, target: float, a: float, b: float, x: float, est: float) -> float:
    """Solve ``z(value) = target`` in ``[a, b]`` from the start ``x``: safeguarded Newton iteration.

    ``evaluate(value)`` returns ``(N, V, V')``: the numerator ``d - value`` of the statistic, its variance and
    the variance's derivative (:func:`_difference_score_terms`). ``[a, b]`` holds the root, ``z >= target``
    at ``a`` and ``z <= target`` at ``b``; ``est`` is the estimate, the end at which ``N = 0``.

    The equation solved is ``k(value) = N - T|T| V / |N| = 0`` (``T`` the target): since
    ``k = V (z|z| - T|T|) / |N|``, it has the sign of ``z - T`` and the same root. It is chosen for being
    close to linear in the value in the cases that are hard for the obvious forms. ``z - T`` itself
    behaves like ``1/sqrt(distance)`` near a limit close to -1 or 1, where ``V`` vanishes, and Newton's
    method on it overshoots there. ``N|N| - T|T| V`` behaves like ``distance**2`` where ``N`` and ``V``
    both vanish at the estimate (an estimate of -1 or 1, or no successes at all), and Newton's method on it
    only halves the distance there. ``k`` is linear in both cases, and nearly so for large groups (``V``
    nearly constant). Newton's steps are ``x - k/k'`` with ``k' = -1 - T|T| (V' + V/N) / |N|``. Its weak spot
    is a start much closer to the estimate than the limit is, which only critical values near 1e-8 produce;
    halving then takes over, much as in a plain bracketing search.

    Each evaluation replaces the end of the bracket on its side, so the bracket always holds the root. The
    next point is Newton's unless it would not land strictly inside the bracket or would not at least halve
    the step before last; then it is the middle of the bracket (a Newton point exactly on an end is first
    moved one float inside it: the root is within a rounding of that end). This is
    the standard safeguarded Newton iteration (the rule of ``rtsafe`` in Press et al. 2007, section 9.4): the
    steps at least halve every second iteration, so it always ends, and near the root, where ``k`` is smooth
    with ``k' < 0``, Newton's steps are taken and converge quadratically. The start (Newcombe's limit,
    :func:`_difference_start`) is typically within a few per cent of the half-width, so one to three
    evaluations suffice.

    A Newton point is returned as soon as its predicted error is below ``_ACCURACY`` times the larger of its
    size and the estimate's: under quadratic convergence the error after a step ``s`` that followed a Newton
    step ``s_old`` without crossing the root is about ``|s| (s / s_old)**2`` (otherwise ``|s|`` itself is
    taken), an estimate that does not depend on the scale of the problem. The search also ends when ``k`` is
    exactly 0 or the bracket is within a few units in the last place (its middle is returned, as
    :func:`solve_decreasing` does).
    """
    if not a < b:
        return a
    if not a < x < b:  # also NaN
        x = 0.5 * (a + b)
    signed_square = target * abs(target)
    last = before = b - a
    newton_last = positive_last = False
    for _ in range(_MAX_EVALUATIONS):
        num, var, dvar = evaluate(x)
        size = abs(num)
        f = num - signed_square * var / size
        slope = -1.0 - signed_square * (dvar + var / num) / size
        if f == 0.0:
            return x
        positive = f > 0.0
        if positive:
            a = x
        else:
            b = x
        step = f / slope
        following = x - step
        error = abs(step)
        ratio = step / last
        ratio = ratio * ratio
        # Quadratic convergence shows as a shrinking Newton step that did not cross the root.
        if newton_last and positive == positive_last and ratio < 1.0:
            error = error * ratio
        # Tested before the safeguard: a step below the rounding of x leaves x on the end of the bracket.
        if a <= following <= b and error <= _ACCURACY * max(abs(following), abs(est)):
            return following
        newton = a < following < b and abs(step) <= 0.5 * abs(before)
        if not newton:
            # Newton's point exactly on an end (-1, 1 or the estimate: the root within a rounding of it):
            # try one float inside it; any other failure: halve.
            if following == b:
                following = math.nextafter(b, a)
            elif following == a:
                following = math.nextafter(a, b)
            else:
                following = 0.5 * (a + b)
            if not a < following < b:
                following = 0.5 * (a + b)
            step = x - following
        if not b - a > 4.0 * math.ulp(max(abs(a), abs(b))):
            return 0.5 * (a + b)
        before, last, newton_last, positive_last, x = last, step, newton, positive, following
    return 0.5 * (a + b)


def _scalar_difference_bounds(a1: float, m1: float, a2: float, m2: float, zl: float, zu: float,
                              correction: bool) -> tuple[float, float]:
    """Return (lower, upper) of the difference for one table with floats, clamped to [-1, 1].

    Raises :class:`_Edge` (or an ArithmeticError or ValueError) for a table the scalar path declines; the
    array code (:func:`_difference_interval`) has the branches for those.
    """
    if not (0.0 < a1 < m1 and 0.0 < a2 < m2) or math.isnan(zl) or math.isnan(zu):
        raise _Edge
    evaluate, start = _scalar_difference_problem(a1, m1, a2, m2, correction)
    est = a1 / m1 - a2 / m2
    # A side left open is -1 or 1 whatever its search would give: no search. A critical value of 0
    # or below gives the estimate, the end of the search interval (_difference_interval).
    lower = upper = None
    if not math.isinf(zl):
        lower = _scalar_limit(evaluate, zl, -1.0, est, start(zl, 1.0), est) if zl > 0.0 else est
    if not math.isinf(zu):
        upper = _scalar_limit(evaluate, -zu, est, 1.0, start(zu, -1.0), est) if zu > 0.0 else est
    return (-1.0 if lower is None else min(max(lower, -1.0), 1.0),
            1.0 if upper is None else min(max(upper, -1.0), 1.0))


def _scalar_difference_interval(x1, n1, x2, n2, z_lower, z_upper, correction: bool):
    """Return (lower, upper) of the difference for 1-d arrays, one comparison at a time with floats.

    Comparisons the scalar path declines are computed by :func:`_difference_interval` in one call.
    """
    size = x1.shape[0]
    lower = np.empty(size)
    upper = np.empty(size)
    declined = []
    for i, (a1, m1, a2, m2, zl, zu) in enumerate(zip(x1.tolist(), n1.tolist(), x2.tolist(), n2.tolist(),
                                                      z_lower.tolist(), z_upper.tolist(), strict=True)):
        try:
            lower[i], upper[i] = _scalar_difference_bounds(a1, m1, a2, m2, zl, zu, correction)
        except (_Edge, ArithmeticError, ValueError):
            declined.append(i)
    if declined:
        idx = np.asarray(declined)
        lower[idx], upper[idx] = _difference_interval(x1[idx], n1[idx], x2[idx], n2[idx], z_lower[idx],
                                                      z_upper[idx], correction)
    return lower, upper
