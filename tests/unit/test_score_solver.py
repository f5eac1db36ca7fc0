"""The search behind the score interval of the difference (stats/score.py, safeguarded Newton iteration).

Sources used here:

* Definitions: the limits solve ``z(value) = z_lower`` and ``z(value) = -z_upper`` for the score statistic
  of Miettinen & Nurminen (1985, Statistics in Medicine 4:213-226; ``correction=True``) or Farrington &
  Manning (1990, Statistics in Medicine 9:1447-1454; ``correction=False``). Two independent checks of
  that: the package's own ``score_statistic`` (which the search does not call) must change sides across
  each limit, and a 60-digit ``decimal`` bisection on the likelihood equation and the score equation
  (written here, sharing no code with the package) must agree with the limits.
* The start of the search is Newcombe's hybrid score limit (Newcombe 1998, Statistics in Medicine
  17:873-890, method 10), also offered as the ``newcombe`` interval of ``intervals.difference_bounds``.
* The slope of the restricted variance is checked against central finite differences of
  ``restricted_rates_difference_full``.
* The evaluation budgets below are this implementation's own bounds (measured, with margin), not a
  published figure; they count calls, not seconds.
"""

from __future__ import annotations

from decimal import Decimal, localcontext

import numpy as np
import pytest

from proportio.stats import intervals, score

Z95 = 1.959963984540054  # scipy.special.ndtri(0.975)


def random_tables(seed: int, size: int, interior: bool = False):
    """Return (x1, n1, x2, n2) over small to huge groups and rates from 1e-9 to 1 - 1e-9 (and 0, 1)."""
    rng = np.random.default_rng(seed)
    kind = rng.integers(0, 4, size)

    def trials():
        return np.where(kind == 0, rng.integers(1, 40, size),
                        np.where(kind == 1, rng.integers(1, 300_000, size),
                                 np.where(kind == 2, rng.integers(1, 10**12 + 1, size),
                                          rng.choice([1, 2, 10**12], size)))).astype(np.float64)

    n1, n2 = trials(), trials()
    rate = rng.choice([0.0, 1e-9, 1e-5, 1e-3, 0.02, 0.1, 0.5, 0.9, 0.999, 1.0 - 1e-9, 1.0], size)
    rate1 = np.clip(rate * rng.uniform(0.7, 1.4, size), 0.0, 1.0)
    x1 = rng.binomial(n1.astype(np.int64), rate1).astype(np.float64)
    x2 = rng.binomial(n2.astype(np.int64), rate).astype(np.float64)
    if interior:
        n1, n2 = np.maximum(n1, 2.0), np.maximum(n2, 2.0)
        x1, x2 = np.clip(x1, 1.0, n1 - 1.0), np.clip(x2, 1.0, n2 - 1.0)
    return x1, n1, x2, n2


def count_evaluations(monkeypatch):
    """Count, per searched limit, the statistic evaluations of the array search."""
    counts = []
    original = score._newton_limits

    def counting(evaluate, target, lo, hi, x, est):
        calls = np.zeros(np.size(target), dtype=int)

        def wrapped(v, idx):
            np.add.at(calls, idx, 1)
            return evaluate(v, idx)

        result = original(wrapped, target, lo, hi, x, est)
        counts.append(calls)
        return result

    monkeypatch.setattr(score, "_newton_limits", counting)
    return counts


# ----------------------------------------------------------------------------- the limits solve the equation


@pytest.mark.parametrize("correction", [True, False])
@pytest.mark.parametrize("z", [0.3, 1.6448536269514722, Z95, 3.090232306167813, 8.0, 40.0])
def test_the_statistic_changes_side_across_each_limit(correction, z):
    # Definition of the score limits (module docstring); score_statistic is not used by the search.
    x1, n1, x2, n2 = random_tables(int(z * 10) + correction, 3000)
    zs = np.full(x1.shape, z)
    lower, upper = score.score_interval(x1, n1, x2, n2, zs, zs, "difference", correction)
    assert np.all(np.isfinite(lower)) and np.all(np.isfinite(upper))
    assert np.all((-1.0 <= lower) & (lower <= upper) & (upper <= 1.0))
    est = x1 / n1 - x2 / n2
    for limit, target in ((lower, z), (upper, -z)):
        # 1e-12 of the distance to the estimate (the accuracy asked for), at least a few units in the last
        # place of the limit (below that the statistic is rounding noise).
        h = np.maximum(1e-12 * np.abs(est - limit), 8.0 * np.spacing(np.abs(limit)))
        inside = (limit - h > -1.0) & (limit + h < 1.0) & (np.abs(est - limit) > 2.0 * h)
        assert inside.sum() > 0.8 * inside.size
        args = (x1[inside], n1[inside], x2[inside], n2[inside])
        left = score.score_statistic(*args, limit[inside] - h[inside], "difference", correction)
        right = score.score_statistic(*args, limit[inside] + h[inside], "difference", correction)
        assert np.all(left >= target), np.flatnonzero(left < target)[:5]
        assert np.all(right <= target), np.flatnonzero(right > target)[:5]


def _decimal_limit(x1: int, n1: int, x2: int, n2: int, z: float, correction: bool, lower: bool) -> Decimal:
    """Return a score limit to ~1e-20 by bisection in 60-digit decimals (no code shared with the package)."""
    with localcontext() as ctx:
        ctx.prec = 60
        X1, N1, X2, N2 = (Decimal(v) for v in (x1, n1, x2, n2))
        F1, F2 = N1 - X1, N2 - X2
        est = X1 / N1 - X2 / N2
        factor = (N1 + N2) / (N1 + N2 - 1) if correction else Decimal(1)

        def score_of(p: Decimal, d: Decimal) -> tuple[Decimal, Decimal]:
            q = p - d
            g = ((X1 / p if X1 else 0) - (F1 / (1 - p) if F1 else 0)
                 + (X2 / q if X2 else 0) - (F2 / (1 - q) if F2 else 0))
            dg = -((X1 / (p * p) if X1 else 0) + (F1 / ((1 - p) ** 2) if F1 else 0)
                   + (X2 / (q * q) if X2 else 0) + (F2 / ((1 - q) ** 2) if F2 else 0))
            return g, dg

        def restricted_p1(d: Decimal) -> Decimal:
            # The likelihood of p1 (with p2 = p1 - d) is concave: bisect its derivative over the feasible
            # range, then polish with Newton steps kept inside the bracket (rates near 1e-11 need ~1e-35).
            lo, hi = max(Decimal(0), d), min(Decimal(1), 1 + d)
            for _ in range(70):
                p = (lo + hi) / 2
                lo, hi = (p, hi) if score_of(p, d)[0] > 0 else (lo, p)
            p = (lo + hi) / 2
            for _ in range(8):
                g, dg = score_of(p, d)
                if g == 0 or dg == 0:
                    break
                step = p - g / dg
                if not lo < step < hi:
                    break
                p = step
            return p

        def excess(d: Decimal) -> Decimal:
            # Sign of z(d) - target, from (d_hat - d)**2 against target**2 * V (the statistic is positive
            # below the estimate and negative above it).
            p1 = restricted_p1(d)
            p2 = p1 - d
            var = (p1 * (1 - p1) / N1 + p2 * (1 - p2) / N2) * factor
            gap = est - d
            return gap * gap - Decimal(z) ** 2 * var if lower else Decimal(z) ** 2 * var - gap * gap

        lo, hi = (Decimal(-1), est) if lower else (est, Decimal(1))
        for _ in range(120):
            mid = (lo + hi) / 2
            lo, hi = (mid, hi) if excess(mid) >= 0 else (lo, mid)
        return (lo + hi) / 2


@pytest.mark.parametrize("correction", [True, False])
@pytest.mark.parametrize("table, z", [
    ((471, 9598, 412, 9630), Z95),
    ((3, 40, 9, 41), Z95),
    ((0, 25, 4, 31), 1.6448536269514722),       # no successes in one group
    ((12, 12, 30, 35), 3.090232306167813),      # all successes in one group
    ((7, 10**12, 3, 10**12), Z95),              # rates near 1e-11 in huge groups
    ((1, 1, 0, 1), Z95),                        # one trial each
    ((2, 9, 5, 7), 40.0),                       # limits close to -1 and 1
])
def test_limits_agree_with_a_60_digit_reference(correction, table, z):
    # Independent 60-digit bisection on the definitions (module docstring).
    x1, n1, x2, n2 = table
    lower, upper = score.score_interval(*(np.array([float(v)]) for v in table), np.array([z]), np.array([z]),
                                        "difference", correction)
    est = x1 / n1 - x2 / n2
    for ours, is_lower in ((float(lower[0]), True), (float(upper[0]), False)):
        ref = float(_decimal_limit(x1, n1, x2, n2, z, correction, is_lower))
        # 1e-12 of the half-width, or a few units in the last place of the limit.
        assert abs(ours - ref) <= max(1e-12 * abs(est - ref), 8.0 * np.spacing(abs(ref))), (ours, ref)


# ----------------------------------------------------------------------------- scalar and array paths


@pytest.mark.parametrize("correction", [True, False])
@pytest.mark.parametrize("z_lower, z_upper", [(1e-8, 40.0), (8.0, 0.3), (1000.0, 1e-3), (0.0, -1.0)])
def test_scalar_path_equals_the_array_code_for_extreme_critical_values(correction, z_lower, z_upper):
    # The two paths run the same float operations (module comment in stats/score.py); test_score_scalar_path
    # covers the usual critical values, this one the extremes, where the search takes its rarer branches.
    x1, n1, x2, n2 = random_tables(40 + correction, 600, interior=True)
    zl, zu = np.full(x1.shape, z_lower), np.full(x1.shape, z_upper)
    arrays = score._difference_interval(x1, n1, x2, n2, zl, zu, correction)
    scalar = score._scalar_difference_interval(x1, n1, x2, n2, zl, zu, correction)
    for a, s in zip(arrays, scalar, strict=True):
        assert np.array_equal(a, s), np.flatnonzero(a != s)[:5]


# ----------------------------------------------------------------------------- edge behaviour


def test_edge_cases_give_the_edges_or_the_estimate_exactly():
    # By definition: the search interval of a limit ends at the estimate and at -1 or 1.
    x1 = np.array([0.0, 5.0, 0.0, 7.0, 3.0, 0.0])
    n1 = np.array([5.0, 5.0, 1.0, 10.0, 3.0, 10.0])
    x2 = np.array([5.0, 0.0, 1.0, 2.0, 3.0, 0.0])
    n2 = np.array([5.0, 5.0, 1.0, 9.0, 3.0, 10.0])
    est = x1 / n1 - x2 / n2
    z = np.full(6, Z95)
    lower, upper = score.score_interval(x1, n1, x2, n2, z, z, "difference", True)
    # An estimate of -1 is its own lower limit, of 1 its own upper limit.
    assert lower[0] == -1.0 and lower[2] == -1.0 and upper[1] == 1.0
    assert -1.0 < upper[0] < 1.0 and -1.0 < lower[1] < 1.0
    # Open sides are the edges; a critical value of 0 or below gives the estimate.
    lower, upper = score.score_interval(x1, n1, x2, n2, np.full(6, np.inf), np.zeros(6), "difference", True)
    assert np.all(lower == -1.0) and np.array_equal(upper, est)
    lower, upper = score.score_interval(x1, n1, x2, n2, np.full(6, -0.5), np.full(6, np.inf), "difference",
                                        False)
    assert np.array_equal(lower, est) and np.all(upper == 1.0)


@pytest.mark.parametrize("z", [1e-8, 0.3, Z95, 8.0, 40.0, 1000.0])
def test_never_nan_and_always_ordered(z):
    # DESIGN.md section 4: no NaN or infinity for 0 or all successes, one trial, 10**12 trials, extreme z.
    x1, n1, x2, n2 = random_tables(int(np.log10(z)) + 20, 4000)
    zs = np.full(x1.shape, z)
    for correction in (True, False):
        lower, upper = score.score_interval(x1, n1, x2, n2, zs, zs, "difference", correction)
        assert np.all(np.isfinite(lower)) and np.all(np.isfinite(upper))
        est = x1 / n1 - x2 / n2
        assert np.all((-1.0 <= lower) & (lower <= est) & (est <= upper) & (upper <= 1.0))


# ----------------------------------------------------------------------------- the ingredients


def test_start_is_newcombes_hybrid_score_limit():
    # Newcombe (1998), method 10, as computed by intervals.difference_bounds("newcombe").
    x1, n1, x2, n2 = random_tables(7, 2000)
    for z in (0.3, Z95, 8.0):
        zs = np.full(x1.shape, z)
        ref_lo, ref_up = intervals.difference_bounds(x1, n1, x2, n2, "newcombe", zs, zs)
        ones = np.ones(x1.shape)
        start_lo = score._difference_start(x1, n1, x2, n2, zs, ones)
        start_up = score._difference_start(x1, n1, x2, n2, zs, -ones)
        # The reference clips to [-1, 1]; the start need not (the search moves it inside its bracket).
        np.testing.assert_allclose(np.clip(start_lo, -1, 1), ref_lo, rtol=1e-12, atol=1e-15)
        np.testing.assert_allclose(np.clip(start_up, -1, 1), ref_up, rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("correction", [True, False])
def test_variance_slope_matches_finite_differences(correction):
    # Central differences of the restricted variance from restricted_rates_difference_full.
    x1, n1, x2, n2 = random_tables(11 + correction, 3000)
    rng = np.random.default_rng(3)
    value = rng.uniform(-0.95, 0.95, x1.shape)
    num, var, dvar = score._difference_score_terms(x1, n1, x2, n2, value, correction)
    np.testing.assert_array_equal(num, x1 / n1 - x2 / n2 - value)
    factor = (n1 + n2) / (n1 + n2 - 1.0) if correction else 1.0

    def variance(v):
        q1, q2, c1, c2 = score.restricted_rates_difference_full(x1, n1, x2, n2, v)
        return (q1 * c1 / n1 + q2 * c2 / n2) * factor

    np.testing.assert_array_equal(var, variance(value))
    # A step small against the smallest positive restricted rate (the scale on which the variance bends).
    rates = np.stack(score.restricted_rates_difference_full(x1, n1, x2, n2, value))
    h = 1e-4 * np.min(np.where(rates > 0.0, rates, 1.0), axis=0)
    up, down = variance(value + h), variance(value - h)
    numeric = (up - down) / (2.0 * h)
    # Away from kinks (a restricted rate reaching or leaving an edge within h), where the one-sided slopes
    # differ.
    forward, backward = (up - var) / h, (var - down) / h
    smooth = np.abs(forward - backward) <= 1e-3 * np.maximum(np.abs(forward), np.abs(backward))
    assert smooth.mean() > 0.9
    # Truncation error ~ (h / rate)**2 = 1e-8 relative; rounding of the variance ~ eps * V / h absolute.
    allowed = 1e-5 * np.abs(numeric) + 100.0 * np.finfo(float).eps * var / h
    assert np.all(np.abs(dvar - numeric)[smooth] <= allowed[smooth]), np.flatnonzero(
        smooth & (np.abs(dvar - numeric) > allowed))[:5]


def test_evaluations_per_limit_stay_few(monkeypatch):
    # The implementation's own budget (module docstring): a few evaluations per limit, never many.
    counts = count_evaluations(monkeypatch)
    x1, n1, x2, n2 = random_tables(5, 20_000)
    for z in (1.6448536269514722, Z95, 3.090232306167813, 8.0, 40.0):
        zs = np.full(x1.shape, z)
        score._difference_interval(x1, n1, x2, n2, zs, zs, True)
    evaluations = np.concatenate(counts)
    searched = evaluations[evaluations > 0]
    assert searched.mean() <= 3.0, searched.mean()
    assert searched.max() <= 16, searched.max()


def test_scalar_path_evaluations_per_limit_stay_few(monkeypatch):
    # Same budget on the float path (a single request).
    calls = []
    original = score._scalar_difference_problem

    def counting(*args):
        evaluate, start = original(*args)

        def wrapped(v):
            calls.append(v)
            return evaluate(v)

        return wrapped, start

    monkeypatch.setattr(score, "_scalar_difference_problem", counting)
    tables = [(471, 9598, 412, 9630), (3, 40, 9, 41), (999_000, 10**6, 998_500, 10**6),
              (12, 100_000, 25, 120_000), (1, 2, 1, 3), (5, 10**12, 9, 10**12)]
    z = np.array([Z95])
    for table in tables:
        score.score_interval(*(np.array([float(v)]) for v in table), z, z, "difference", True)
    assert len(calls) <= 4 * 2 * len(tables), len(calls)
