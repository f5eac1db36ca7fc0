"""Reference tests for the exact tests in proportio.stats.exact.

References used below:
- scipy.stats.fisher_exact, scipy.stats.boschloo_exact and scipy.stats.barnard_exact
  (scipy 1.17), called on the table [[x_t, x_c], [n_t - x_t, n_c - x_c]]: scipy treats the
  COLUMNS as the two samples, and its "greater" means p_column1 > p_column2, i.e.
  p_t > p_c here.
- Exact rational arithmetic (Python integers) for the hypergeometric probabilities and
  for the rejection regions, with an independent dense-grid maximisation over the
  nuisance parameter; the definitions are those of Barnard (1947), Biometrika
  34:123-138, and Boschloo (1970), Statistica Neerlandica 24:1-9, as implemented by scipy.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import minimize_scalar

from proportio.stats import exact

ALTERNATIVES = ("two-sided", "greater", "less")


def scipy_table(x_t: int, n_t: int, x_c: int, n_c: int) -> list[list[int]]:
    return [[x_t, x_c], [n_t - x_t, n_c - x_c]]


def random_tables(seed: int, count: int, max_n: int, min_n: int = 1) -> list[tuple[int, int, int, int]]:
    """Tables with a mix of equal and unequal sizes and of similar and different rates."""
    rng = np.random.default_rng(seed)
    tables = []
    for i in range(count):
        n_t = int(rng.integers(min_n, max_n + 1))
        n_c = n_t if i % 4 == 0 else int(rng.integers(min_n, max_n + 1))
        p_t = rng.random()
        p_c = p_t if i % 2 else rng.random()
        tables.append((int(rng.binomial(n_t, p_t)), n_t, int(rng.binomial(n_c, p_c)), n_c))
    return tables


# ------------------------------------------------------------------ exact references


def exact_fisher(x_t: int, n_t: int, x_c: int, n_c: int, alternative: str) -> float:
    """Fisher's p-value from exact integer hypergeometric weights.

    Two-sided: tables with probability <= observed * (1 + 1e-14), the relative slack of
    scipy.stats.fisher_exact.
    """
    s = x_t + x_c
    lo, hi = max(0, s - n_c), min(n_t, s)
    weight = {k: math.comb(n_t, k) * math.comb(n_c, s - k) for k in range(lo, hi + 1)}
    total = sum(weight.values())
    if alternative == "greater":
        tail = sum(v for k, v in weight.items() if k >= x_t)
    elif alternative == "less":
        tail = sum(v for k, v in weight.items() if k <= x_t)
    else:
        tail = sum(v for v in weight.values() if v * 10**14 <= weight[x_t] * (10**14 + 1))
    return tail / total


def fisher_tail_fraction(n_t: int, n_c: int, a: int, b: int, upper: bool) -> Fraction:
    s = a + b
    lo, hi = max(0, s - n_c), min(n_t, s)
    ks = range(a, hi + 1) if upper else range(lo, a + 1)
    return Fraction(sum(math.comb(n_t, k) * math.comb(n_c, s - k) for k in ks), math.comb(n_t + n_c, s))


def boschloo_region(x_t: int, n_t: int, x_c: int, n_c: int, side: str) -> list[tuple[int, int]]:
    """Tables with Fisher one-sided p <= observed * (1 + 1e-13) (scipy's slack), exactly."""
    upper = side == "greater"
    cut = fisher_tail_fraction(n_t, n_c, x_t, x_c, upper) * Fraction(10**13 + 1, 10**13)
    return [
        (a, b)
        for a in range(n_t + 1)
        for b in range(n_c + 1)
        if fisher_tail_fraction(n_t, n_c, a, b, upper) <= cut
    ]


def wald_key(a: int, b: int, n_t: int, n_c: int, pooled: bool) -> tuple[int, Fraction | None]:
    """Sign and square of the Wald z of p_t - p_c as an exact fraction (None = infinite)."""
    d = a * n_c - b * n_t
    if d == 0:
        return 0, Fraction(0)
    n, s = n_t + n_c, a + b
    if pooled:
        num, den = d * d * n, n_t * n_c * s * (n - s)
    else:
        num, den = d * d * n_t * n_c, a * (n_t - a) * n_c**3 + b * (n_c - b) * n_t**3
    return (1 if d > 0 else -1), (None if den == 0 else Fraction(num, den))


def signed(key: tuple[int, Fraction | None]) -> float | Fraction:
    sign, square = key
    magnitude = math.inf if square is None else square
    return sign * magnitude if sign else 0


def barnard_region(x_t: int, n_t: int, x_c: int, n_c: int, alternative: str, pooled: bool) -> list:
    k0 = wald_key(x_t, x_c, n_t, n_c, pooled)
    cells = []
    for a in range(n_t + 1):
        for b in range(n_c + 1):
            k = wald_key(a, b, n_t, n_c, pooled)
            if alternative == "two-sided":
                inside = abs(signed((1, k[1]))) >= abs(signed((1, k0[1]))) or k0[0] == 0
            elif alternative == "greater":
                inside = signed(k) >= signed(k0)
            else:
                inside = signed(k) <= signed(k0)
            if inside:
                cells.append((a, b))
    return cells


def region_supremum(cells: list[tuple[int, int]], n_t: int, n_c: int) -> float:
    """Maximise P(pi) on a dense grid of pi, then refine each grid maximum (Brent)."""
    n = n_t + n_c
    coef = np.zeros(n + 1)
    for a, b in cells:
        coef[a + b] += math.comb(n_t, a) * math.comb(n_c, b)
    s = np.arange(n + 1)

    def p_of(pi: np.ndarray) -> np.ndarray:
        pi = np.atleast_1d(pi)
        return (coef * pi[:, None] ** s * (1.0 - pi[:, None]) ** (n - s)).sum(axis=1)

    grid = np.linspace(0.0, 1.0, 2001)
    values = p_of(grid)
    best = float(values.max())
    inner = values[1:-1]
    peaks = 1 + np.flatnonzero((inner > values[:-2]) & (inner >= values[2:]))
    for i in peaks[np.argsort(values[peaks])[::-1][:4]]:
        found = minimize_scalar(
            lambda x: -p_of(np.array([x]))[0],
            bounds=(grid[i - 1], grid[i + 1]),
            method="bounded",
            options={"xatol": 1e-14},
        )
        best = max(best, -float(found.fun))
    return min(best, 1.0)


def reference_boschloo(x_t: int, n_t: int, x_c: int, n_c: int, alternative: str) -> float:
    if alternative != "two-sided":
        return region_supremum(boschloo_region(x_t, n_t, x_c, n_c, alternative), n_t, n_c)
    # Twice the smaller one-sided p-value, as in scipy.stats.boschloo_exact.
    one_sided = [reference_boschloo(x_t, n_t, x_c, n_c, side) for side in ("greater", "less")]
    return min(1.0, 2.0 * min(one_sided))


def reference_barnard(x_t: int, n_t: int, x_c: int, n_c: int, alternative: str, pooled: bool = True) -> float:
    return region_supremum(barnard_region(x_t, n_t, x_c, n_c, alternative, pooled), n_t, n_c)


def scipy_float_region(x_t: int, n_t: int, x_c: int, n_c: int, alternative: str, pooled: bool) -> set:
    """The region scipy.stats.barnard_exact (scipy 1.17) builds with floating-point z values."""
    x1 = np.arange(n_t + 1).reshape(-1, 1)
    x2 = np.arange(n_c + 1).reshape(1, -1)
    p1, p2 = x1 / n_t, x2 / n_c
    if pooled:
        p = (x1 + x2) / (n_t + n_c)
        var = p * (1 - p) * (1 / n_t + 1 / n_c)
    else:
        var = p1 * (1 - p1) / n_t + p2 * (1 - p2) / n_c
    with np.errstate(divide="ignore", invalid="ignore"):
        z = (p1 - p2) / np.sqrt(var)
    z[p1 == p2] = 0
    z0 = z[x_t, x_c]
    if alternative == "two-sided":
        inside = np.abs(z) >= abs(z0)
    elif alternative == "greater":
        inside = z >= z0
    else:
        inside = z <= z0
    return {(int(a), int(b)) for a, b in zip(*np.nonzero(inside), strict=True)}


# ------------------------------------------------------------------------------ Fisher


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_fisher_matches_scipy(alternative: str) -> None:
    # scipy.stats.fisher_exact is accurate to ~1e-15 for counts up to a few thousand.
    for x_t, n_t, x_c, n_c in random_tables(11, 300, 3000):
        ours = exact.fisher_exact(x_t, n_t, x_c, n_c, alternative)
        ref = stats.fisher_exact(scipy_table(x_t, n_t, x_c, n_c), alternative)
        assert 0.0 <= ours.pvalue <= 1.0
        assert ours.pvalue == pytest.approx(ref.pvalue, rel=1e-12, abs=1e-300)
        if np.isfinite(ref.statistic):
            assert ours.statistic == pytest.approx(ref.statistic, rel=1e-12)
        else:
            assert ours.statistic is None


def test_fisher_matches_exact_rationals_for_large_counts() -> None:
    # Exact integer arithmetic; scipy.stats.fisher_exact itself drifts by up to ~3e-10
    # relative at 10^6 trials (checked below only loosely), so the exact values are the
    # reference here.
    cases = [(5, 10**6, 17, 10**6), (3, 10**6, 9, 10**6), (40, 10**6, 70, 10**6), (12, 999_983, 2, 10**6)]
    for x_t, n_t, x_c, n_c in cases:
        for alternative in ALTERNATIVES:
            want = exact_fisher(x_t, n_t, x_c, n_c, alternative)
            ours = exact.fisher_exact(x_t, n_t, x_c, n_c, alternative).pvalue
            assert ours == pytest.approx(want, rel=1e-13)
            ref = stats.fisher_exact(scipy_table(x_t, n_t, x_c, n_c), alternative).pvalue
            assert ref == pytest.approx(want, rel=1e-8)


def test_fisher_matches_exact_rationals_moderate_counts() -> None:
    # Exact integer arithmetic over the whole support, including tiny p-values.
    for x_t, n_t, x_c, n_c in random_tables(12, 40, 1000):
        for alternative in ALTERNATIVES:
            want = exact_fisher(x_t, n_t, x_c, n_c, alternative)
            ours = exact.fisher_exact(x_t, n_t, x_c, n_c, alternative).pvalue
            assert ours == pytest.approx(want, rel=1e-12, abs=1e-300)


def test_fisher_two_sided_counts_symmetric_ties() -> None:
    # Equal group sizes make the conditional distribution symmetric: the mirror table
    # (x_c successes in the treatment group) is exactly as likely and must be counted.
    for x_t, x_c, n in [(3, 9, 20), (40, 71, 150), (400, 460, 2000)]:
        want = exact_fisher(x_t, n, x_c, n, "two-sided")
        mirror_excluded = exact_fisher(x_t, n, x_c, n, "less")
        ours = exact.fisher_exact(x_t, n, x_c, n).pvalue
        assert ours == pytest.approx(want, rel=1e-12)
        assert want == pytest.approx(2 * mirror_excluded, rel=1e-12)


def test_fisher_large_counts_and_extremes() -> None:
    big = exact.MAX_TRIALS_FISHER
    res = exact.fisher_exact(big, big, 0, big, "two-sided")
    assert res.pvalue == 0.0 and res.statistic is None
    assert exact.fisher_exact(big, big, 0, big, "less").pvalue == 1.0
    res = exact.fisher_exact(500_000, 10**6, 500_500, 10**6, "greater")
    ref = stats.fisher_exact(scipy_table(500_000, 10**6, 500_500, 10**6), "greater")
    # scipy.stats.fisher_exact; loose tolerance because scipy drifts at this size.
    assert res.pvalue == pytest.approx(ref.pvalue, rel=1e-8)
    with pytest.raises(ValueError, match="n_t"):
        exact.fisher_exact(1, big + 1, 1, 10)


# ---------------------------------------------------------------- Boschloo and Barnard


def test_boschloo_matches_scipy_and_exact_reference() -> None:
    for x_t, n_t, x_c, n_c in random_tables(21, 100, 30):
        for alternative in ALTERNATIVES:
            ours = exact.boschloo_exact(x_t, n_t, x_c, n_c, alternative)
            ref = stats.boschloo_exact(scipy_table(x_t, n_t, x_c, n_c), alternative, n=64)
            assert 0.0 <= ours.pvalue <= 1.0
            # A supremum found more thoroughly is never smaller than scipy's.
            assert ours.pvalue >= ref.pvalue - 1e-9
            assert ours.pvalue == pytest.approx(ref.pvalue, abs=1e-6)
            assert ours.statistic == pytest.approx(ref.statistic, rel=1e-12)
            # Independent exact region and dense-grid maximisation.
            want = reference_boschloo(x_t, n_t, x_c, n_c, alternative)
            assert ours.pvalue == pytest.approx(want, rel=1e-9, abs=1e-14)


@pytest.mark.parametrize("pooled", [True, False])
def test_barnard_matches_scipy_and_exact_reference(pooled: bool) -> None:
    for x_t, n_t, x_c, n_c in random_tables(31 + pooled, 60, 30):
        for alternative in ALTERNATIVES:
            ours = exact.barnard_exact(x_t, n_t, x_c, n_c, alternative, pooled=pooled)
            ref = stats.barnard_exact(scipy_table(x_t, n_t, x_c, n_c), alternative, pooled=pooled, n=64)
            assert 0.0 <= ours.pvalue <= 1.0
            assert ours.pvalue >= ref.pvalue - 1e-9
            exact_cells = set(barnard_region(x_t, n_t, x_c, n_c, alternative, pooled))
            scipy_cells = scipy_float_region(x_t, n_t, x_c, n_c, alternative, pooled)
            if scipy_cells == exact_cells:
                assert ours.pvalue == pytest.approx(ref.pvalue, abs=1e-6)
            else:
                # scipy compares rounded z values and drops tables tied with the observed
                # one; it never adds a table, so its p-value can only be smaller.
                assert scipy_cells < exact_cells
                for a, b in exact_cells - scipy_cells:
                    assert wald_key(a, b, n_t, n_c, pooled)[1] == wald_key(x_t, x_c, n_t, n_c, pooled)[1]
            want = region_supremum(sorted(exact_cells), n_t, n_c)
            assert ours.pvalue == pytest.approx(want, rel=1e-9, abs=1e-14)
            if ours.statistic is None:
                assert np.isinf(ref.statistic)
            else:
                assert ours.statistic == pytest.approx(ref.statistic, rel=1e-12, abs=1e-15)


def test_barnard_counts_ties_scipy_drops() -> None:
    # Table (5, 2) has the same pooled z as the observed (3, 0) (both 15 / sqrt(...));
    # scipy.stats.barnard_exact's floating-point comparison leaves it out.
    x_t, n_t, x_c, n_c = 3, 5, 0, 5
    assert wald_key(5, 2, n_t, n_c, True) == wald_key(3, 0, n_t, n_c, True)
    assert (5, 2) not in scipy_float_region(x_t, n_t, x_c, n_c, "greater", True)
    ours = exact.barnard_exact(x_t, n_t, x_c, n_c, "greater").pvalue
    ref = stats.barnard_exact(scipy_table(x_t, n_t, x_c, n_c), "greater", n=256).pvalue
    want = reference_barnard(x_t, n_t, x_c, n_c, "greater")
    assert ours == pytest.approx(want, rel=1e-12)
    assert ours > ref + 1e-3


def test_supremum_against_dense_grid_for_larger_tables() -> None:
    # Larger polynomials (degree up to 160) than the scipy comparisons above.
    for x_t, n_t, x_c, n_c in random_tables(41, 6, 80, min_n=40):
        for alternative in ("greater", "less"):
            ours = exact.boschloo_exact(x_t, n_t, x_c, n_c, alternative).pvalue
            want = reference_boschloo(x_t, n_t, x_c, n_c, alternative)
            assert ours == pytest.approx(want, rel=1e-9, abs=1e-14)
        ours = exact.barnard_exact(x_t, n_t, x_c, n_c).pvalue
        want = reference_barnard(x_t, n_t, x_c, n_c, "two-sided")
        assert ours == pytest.approx(want, rel=1e-9, abs=1e-14)


def test_nuisance_attains_the_pvalue() -> None:
    for x_t, n_t, x_c, n_c in [(7, 12, 1, 10), (14, 30, 4, 25), (2, 13, 8, 17)]:
        for test in (exact.boschloo_exact, exact.barnard_exact):
            res = test(x_t, n_t, x_c, n_c, "greater")
            cells = (
                boschloo_region(x_t, n_t, x_c, n_c, "greater")
                if test is exact.boschloo_exact
                else barnard_region(x_t, n_t, x_c, n_c, "greater", True)
            )
            pi, n = res.nuisance, n_t + n_c
            at = sum(
                math.comb(n_t, a) * math.comb(n_c, b) * pi ** (a + b) * (1 - pi) ** (n - a - b)
                for a, b in cells
            )
            assert at == pytest.approx(res.pvalue, rel=1e-12)


def test_boschloo_never_exceeds_fisher() -> None:
    # Boschloo (1970), Statistica Neerlandica 24:1-9: the test is uniformly more powerful
    # than Fisher's one-sided test; equivalently its one-sided p-value is never larger
    # (from memory). The two-sided p-value (twice the smaller one-sided one) is then at
    # most twice the smaller one-sided Fisher p-value.
    for x_t, n_t, x_c, n_c in random_tables(51, 60, 60):
        fisher = {alt: exact.fisher_exact(x_t, n_t, x_c, n_c, alt).pvalue for alt in ALTERNATIVES}
        for alternative in ("greater", "less"):
            assert exact.boschloo_exact(x_t, n_t, x_c, n_c, alternative).pvalue <= fisher[alternative] + 1e-12
        two_sided = exact.boschloo_exact(x_t, n_t, x_c, n_c).pvalue
        assert two_sided <= min(1.0, 2 * min(fisher["greater"], fisher["less"])) + 1e-12


def test_alternatives_follow_treatment_minus_control() -> None:
    # Treatment clearly better than control: "greater" is small, "less" is large, and
    # both agree with scipy on the column-oriented table. Asymmetric sizes on purpose.
    x_t, n_t, x_c, n_c = 14, 18, 4, 25
    for test, ref_test in (
        (exact.boschloo_exact, stats.boschloo_exact),
        (exact.barnard_exact, stats.barnard_exact),
    ):
        greater = test(x_t, n_t, x_c, n_c, "greater").pvalue
        less = test(x_t, n_t, x_c, n_c, "less").pvalue
        assert greater < 0.01 < 0.99 < less
        for alternative, value in (("greater", greater), ("less", less)):
            ref = ref_test(scipy_table(x_t, n_t, x_c, n_c), alternative, n=64).pvalue
            assert value == pytest.approx(ref, abs=1e-6)
    fisher = exact.fisher_exact(x_t, n_t, x_c, n_c, "greater")
    assert fisher.pvalue < 0.01 and fisher.statistic > 1


def test_swapping_groups_swaps_alternatives() -> None:
    for x_t, n_t, x_c, n_c in random_tables(61, 12, 40):
        for alt, mirrored in (("greater", "less"), ("less", "greater"), ("two-sided", "two-sided")):
            a = exact.boschloo_exact(x_t, n_t, x_c, n_c, alt)
            b = exact.boschloo_exact(x_c, n_c, x_t, n_t, mirrored)
            assert a.pvalue == pytest.approx(b.pvalue, rel=1e-12, abs=1e-15)
            c = exact.barnard_exact(x_t, n_t, x_c, n_c, alt)
            d = exact.barnard_exact(x_c, n_c, x_t, n_t, mirrored)
            assert c.pvalue == pytest.approx(d.pvalue, rel=1e-12, abs=1e-15)
            assert c.statistic == pytest.approx(-d.statistic, abs=1e-12)


EDGE_CASES = [
    (0, 10, 0, 10),  # no successes anywhere
    (10, 10, 12, 12),  # all successes in both groups
    (1, 1, 0, 1),  # one trial per group
    (0, 1, 3, 7),  # one trial in the treatment group
    (4, 9, 4, 9),  # identical groups
    (8, 8, 0, 8),  # x_t = n_t and x_c = 0
    (0, 6, 6, 6),
    (13, 13, 0, 1),
]


@pytest.mark.parametrize("table", EDGE_CASES)
def test_edge_cases_give_valid_pvalues(table: tuple[int, int, int, int]) -> None:
    x_t, n_t, x_c, n_c = table
    for alternative in ALTERNATIVES:
        results = [
            exact.boschloo_exact(x_t, n_t, x_c, n_c, alternative),
            exact.barnard_exact(x_t, n_t, x_c, n_c, alternative),
            exact.barnard_exact(x_t, n_t, x_c, n_c, alternative, pooled=False),
        ]
        for res in results:
            assert 0.0 <= res.pvalue <= 1.0 and not math.isnan(res.pvalue)
            assert 0.0 <= res.nuisance <= 1.0
            assert res.statistic is None or math.isfinite(res.statistic)
        ref = stats.boschloo_exact(scipy_table(x_t, n_t, x_c, n_c), alternative, n=64).pvalue
        assert results[0].pvalue == pytest.approx(ref, abs=1e-6)
        want = reference_barnard(x_t, n_t, x_c, n_c, alternative)
        assert results[1].pvalue == pytest.approx(want, rel=1e-9, abs=1e-14)
        fisher = exact.fisher_exact(x_t, n_t, x_c, n_c, alternative)
        assert fisher.pvalue == pytest.approx(exact_fisher(x_t, n_t, x_c, n_c, alternative), rel=1e-12)


def test_edge_case_values() -> None:
    # No table can be more extreme than "nothing happened in either group".
    assert exact.boschloo_exact(0, 10, 0, 10).pvalue == 1.0
    assert exact.barnard_exact(0, 10, 0, 10).pvalue == 1.0
    # Unpooled z is infinite for 8/8 against 0/8: reported as None, p-value still exact.
    res = exact.barnard_exact(8, 8, 0, 8, "greater", pooled=False)
    assert res.statistic is None
    assert res.pvalue == pytest.approx(reference_barnard(8, 8, 0, 8, "greater", pooled=False), rel=1e-9)


def test_pvalue_one_when_every_table_is_as_extreme() -> None:
    res = exact.boschloo_exact(0, 12, 9, 12, "greater")
    assert res.pvalue == 1.0 and res.nuisance == pytest.approx(9 / 24)


def test_budget_fallback_is_conservative(monkeypatch: pytest.MonkeyPatch) -> None:
    # If the branch and bound ran out of budget, the certified upper bound is reported,
    # which can only over-state the p-value.
    want = exact.boschloo_exact(14, 30, 4, 25, "greater").pvalue
    monkeypatch.setattr(exact, "_MAX_LIVE_INTERVALS", 1)
    capped = exact.boschloo_exact(14, 30, 4, 25, "greater").pvalue
    assert want <= capped <= 1.0


def test_limits_and_bad_arguments() -> None:
    too_big = exact.MAX_TRIALS_PER_GROUP_BOSCHLOO + 1
    with pytest.raises(ValueError, match="normal-approximation"):
        exact.boschloo_exact(1, too_big, 1, 10)
    with pytest.raises(ValueError, match="n_c"):
        exact.barnard_exact(1, 10, 1, exact.MAX_TRIALS_PER_GROUP_BARNARD + 1)
    bad_calls = [
        lambda: exact.boschloo_exact(1, 10, 1, 10, "bigger"),
        lambda: exact.barnard_exact(11, 10, 1, 10),
        lambda: exact.barnard_exact(-1, 10, 1, 10),
        lambda: exact.fisher_exact(1, 0, 0, 10),
        lambda: exact.fisher_exact(1.0, 10, 1, 10),
        lambda: exact.fisher_exact(True, 10, 1, 10),
        lambda: exact.barnard_exact(1, 10, 1, 10, pooled="yes"),
    ]
    for call in bad_calls:
        with pytest.raises(ValueError):
            call()
    # numpy integers are integers.
    assert exact.fisher_exact(np.int64(3), np.int64(10), 1, 10).pvalue == pytest.approx(
        exact.fisher_exact(3, 10, 1, 10).pvalue
    )


def test_most_extreme_table_has_closed_form() -> None:
    # For n/n against 0/n the observed table is the only one as extreme (its Fisher
    # p-value 1/C(2n, n) and its z are unique extremes), so P(pi) = pi^n (1 - pi)^n with
    # supremum 4^-n at pi = 1/2 (exact arithmetic). At n = 450 the cut-off lies below
    # e^-600, which exercises the log-scale path; at 2000 the p-value underflows to 0.
    n = 450
    want = 4.0**-n
    for test in (exact.boschloo_exact, exact.barnard_exact):
        res = test(n, n, 0, n, "greater")
        assert res.pvalue == pytest.approx(want, rel=1e-9)
        assert res.nuisance == pytest.approx(0.5, abs=1e-6)
        assert test(n, n, 0, n).pvalue == pytest.approx(2 * want, rel=1e-9)
    fisher = exact.fisher_exact(n, n, 0, n, "greater").pvalue
    assert fisher == pytest.approx(1 / math.comb(2 * n, n), rel=1e-12)
    limit = exact.MAX_TRIALS_PER_GROUP_BOSCHLOO
    assert exact.boschloo_exact(limit, limit, 0, limit).pvalue == 0.0
