"""Reference checks for proportio.stats.twogroup.compare (two-group hypothesis tests).

Sources used here:

* statsmodels 0.15 ``proportions_ztest`` (pooled z; ``count=[treatment, control]`` so that the
  difference is treatment minus control; alternatives "larger"/"smaller" are our "greater"/"less"),
  ``test_proportions_2indep`` (method "wald": unpooled z with a null difference; method "score" with
  ``correction=True``: Miettinen & Nurminen 1985, Statistics in Medicine 4:213-226).
* scipy.stats.chi2_contingency (Pearson chi-square, ``correction=True`` is Yates' correction) and
  scipy.stats.fisher_exact; scipy.stats.contingency.odds_ratio(kind="conditional") for the interval
  reported with Fisher's test on the odds-ratio scale.
* The normal tail asymptotic (Abramowitz & Stegun 1964, 26.2.12, from memory):
  log Phi(-z) = -z^2/2 - log z - log(2 pi)/2 + log(1 - 1/z^2 + 3/z^4 - ...), evaluated with the
  standard library to check log10 p-values far below the smallest double.

statsmodels' score test of a non-zero null difference uses a mistyped cubic for the restricted MLE
(tests/reference/test_score.py); it is right at a null difference of 0 and where the control group has
only successes, so the difference score test is compared there only.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.stats import chi2_contingency, fisher_exact
from scipy.stats.contingency import odds_ratio as scipy_odds_ratio
from statsmodels.stats import proportion as sm_proportion

from proportio.stats import score
from proportio.stats.twogroup import compare

# Bound under another name: pytest would collect a module-level name starting with "test_".
sm_test_2indep = sm_proportion.test_proportions_2indep
proportions_ztest = sm_proportion.proportions_ztest

ALTERNATIVES = ("two-sided", "greater", "less")
SM_ALTERNATIVE = {"two-sided": "two-sided", "greater": "larger", "less": "smaller"}
SM_COMPARE = {"difference": "diff", "ratio": "ratio", "odds-ratio": "odds-ratio"}


def random_tables(rng: np.random.Generator, size: int, max_n: int = 500):
    """Random integer (x1, n1, x2, n2) with a share of zeros, all-successes and one-trial groups."""
    n1 = rng.integers(1, max_n, size)
    n2 = rng.integers(1, max_n, size)
    kind = rng.integers(0, 10, size)
    n1 = np.where(kind == 6, 1, n1)
    x1 = np.floor(rng.uniform(0, 1, size) * (n1 + 1)).astype(np.int64)
    x2 = np.floor(rng.uniform(0, 1, size) * (n2 + 1)).astype(np.int64)
    x1 = np.where(kind == 0, 0, np.where(kind == 1, n1, x1))
    x2 = np.where(kind == 2, 0, np.where(kind == 3, n2, x2))
    return x1, n1, x2, n2


def sm_quiet(fn, *args, **kwargs):
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        return fn(*args, **kwargs)


def assert_p_close(ours, ref):
    """p-values to 1e-8 relative; below 1e-10 compare log p to 1e-8 relative instead, since a relative
    error e in z moves log p by about e z^2 (both sides compute the statistic in double precision)."""
    ours, ref = np.asarray(ours, dtype=float), np.asarray(ref, dtype=float)
    big = ref > 1e-10
    np.testing.assert_allclose(ours[big], ref[big], rtol=1e-8, atol=0)
    tiny = ~big & (ref > 0) & (ours > 0)
    np.testing.assert_allclose(np.log(ours[tiny]), np.log(ref[tiny]), rtol=1e-8, atol=0)
    # Underflow on either side: the other must be below 1e-300 too.
    assert np.all(ours[~big & ~tiny] < 1e-300) and np.all(ref[~big & ~tiny] < 1e-300)


def fields(results, name):
    return np.array([np.nan if getattr(r, name) is None else getattr(r, name) for r in results], dtype=float)


# ------------------------------------------------------------------------------------ z-tests


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_z_pooled_matches_statsmodels_proportions_ztest(alternative):
    # statsmodels 0.15 proportions_ztest(count=[x_t, x_c], nobs=[n_t, n_c], alternative=...).
    rng = np.random.default_rng(201 + ALTERNATIVES.index(alternative))
    x1, n1, x2, n2 = random_tables(rng, 1000)
    keep = (x1 + x2 > 0) & (x1 + x2 < n1 + n2)  # pooled rate strictly inside (0, 1)
    x1, n1, x2, n2 = (a[keep] for a in (x1, n1, x2, n2))
    res = compare(x1, n1, x2, n2, method="z-pooled", alternative=alternative)
    stat, p = fields(res, "statistic"), fields(res, "p_value")
    for i in range(x1.size):
        ref_z, ref_p = proportions_ztest(
            [x1[i], x2[i]], [n1[i], n2[i]], alternative=SM_ALTERNATIVE[alternative]
        )
        assert stat[i] == pytest.approx(ref_z, rel=1e-9, abs=1e-12)
        assert p[i] == pytest.approx(ref_p, rel=1e-9, abs=1e-300)
    assert all(r.reject_null == (r.p_value <= 0.05) for r in res)


def test_z_pooled_with_no_variance_is_not_significant():
    # Every trial with the same outcome in both groups: statsmodels divides by zero; ours reports no
    # evidence of a difference (p = 1), no statistic and a warning.
    for table in [(0, 10, 0, 20), (10, 10, 20, 20), (0, 1, 0, 1), (1, 1, 1, 1)]:
        (r,) = compare(*table, method="z-pooled")
        assert r.statistic is None and r.p_value == 1.0 and r.reject_null is False and r.warnings


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_z_unpooled_matches_statsmodels_wald(alternative):
    # statsmodels 0.15 test_proportions_2indep(method="wald", compare="diff", value=null).
    rng = np.random.default_rng(211 + ALTERNATIVES.index(alternative))
    for null in (0.0, -0.2, 0.05, 0.37):
        x1, n1, x2, n2 = random_tables(rng, 1000)
        res = compare(x1, n1, x2, n2, method="z-unpooled", alternative=alternative, null_value=null)
        ref = sm_quiet(
            sm_test_2indep,
            x1,
            n1,
            x2,
            n2,
            value=null,
            method="wald",
            compare="diff",
            alternative=SM_ALTERNATIVE[alternative],
        )
        stat, p = fields(res, "statistic"), fields(res, "p_value")
        p1, p2 = x1 / n1, x2 / n2
        se0 = (p1 * (1 - p1) / n1 + p2 * (1 - p2) / n2) == 0
        assert se0.sum() >= 5
        np.testing.assert_allclose(stat[~se0], ref.statistic[~se0], rtol=1e-9, atol=1e-12)
        np.testing.assert_allclose(p[~se0], ref.pvalue[~se0], rtol=1e-9, atol=1e-300)
        # Zero standard error: undefined unless the data sit exactly at the null (then p = 1).
        for i in np.flatnonzero(se0):
            at_null = p1[i] - p2[i] - null == 0
            assert res[i].p_value == (1.0 if at_null else None) and res[i].statistic is None


def test_z_tests_with_continuity_correction_by_hand():
    # Continuity correction (Fleiss, Levin & Paik 2003, ch. 6; from memory): |d| is reduced by
    # (1/n1 + 1/n2)/2, not below 0. Hand computation with the standard library.
    rng = np.random.default_rng(223)
    x1, n1, x2, n2 = random_tables(rng, 500)
    keep = (x1 + x2 > 0) & (x1 + x2 < n1 + n2) & (x1 > 0) & (x1 < n1)
    x1, n1, x2, n2 = (a[keep] for a in (x1, n1, x2, n2))
    pooled = compare(x1, n1, x2, n2, method="z-pooled", continuity_correction=True)
    unpooled = compare(x1, n1, x2, n2, method="z-unpooled", continuity_correction=True, null_value=0.1)
    for i in range(x1.size):
        a, b, c, d = int(x1[i]), int(n1[i]), int(x2[i]), int(n2[i])
        diff = a / b - c / d
        cc = 0.5 * (1 / b + 1 / d)
        pbar = (a + c) / (b + d)
        z = math.copysign(max(abs(diff) - cc, 0.0), diff) / math.sqrt(pbar * (1 - pbar) * (1 / b + 1 / d))
        assert pooled[i].statistic == pytest.approx(z, rel=1e-12, abs=1e-12)
        se = math.sqrt(a / b * (1 - a / b) / b + c / d * (1 - c / d) / d)
        dn = diff - 0.1
        assert unpooled[i].statistic == pytest.approx(
            math.copysign(max(abs(dn) - cc, 0.0), dn) / se, rel=1e-12, abs=1e-12
        )


# ---------------------------------------------------------------------------------- score test


@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("effect", ["ratio", "odds-ratio"])
def test_score_matches_statsmodels_ratio_and_odds_ratio(effect, alternative):
    # statsmodels 0.15 test_proportions_2indep(method="score", correction=True, compare=..., value=...).
    # statsmodels clips the odds-ratio restricted rates at 1e-10, so tables whose restricted rates come
    # that close to 0 or 1 are left out.
    rng = np.random.default_rng(227 + ALTERNATIVES.index(alternative))
    for null in (1.0, 0.6, 1.25, 3.0):
        x1, n1, x2, n2 = random_tables(rng, 600)
        fn = score.restricted_rates_ratio if effect == "ratio" else score.restricted_rates_odds_ratio
        q1, q2 = fn(*(a.astype(float) for a in (x1, n1, x2, n2)), null)
        keep = (q1 > 1e-8) & (q1 < 1 - 1e-8) & (q2 > 1e-8) & (q2 < 1 - 1e-8)
        x1, n1, x2, n2 = (a[keep] for a in (x1, n1, x2, n2))
        res = compare(x1, n1, x2, n2, method="score", effect=effect, null_value=null, alternative=alternative)
        ref = sm_quiet(
            sm_test_2indep,
            x1,
            n1,
            x2,
            n2,
            value=null,
            method="score",
            compare=SM_COMPARE[effect],
            alternative=SM_ALTERNATIVE[alternative],
            correction=True,
        )
        np.testing.assert_allclose(fields(res, "statistic"), ref.statistic, rtol=1e-9, atol=1e-9)
        assert_p_close(fields(res, "p_value"), ref.pvalue)


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_score_matches_statsmodels_difference_where_statsmodels_is_right(alternative):
    # statsmodels 0.15 test_proportions_2indep(method="score", compare="diff"): at a null of 0 (pooled
    # rate) on any table, and at non-zero nulls on tables whose control has only successes.
    rng = np.random.default_rng(233 + ALTERNATIVES.index(alternative))
    for null in (0.0, -0.3, 0.1, 0.45):
        x1, n1, x2, n2 = random_tables(rng, 600)
        if null != 0.0:
            x2 = n2.copy()
        res = compare(x1, n1, x2, n2, method="score", null_value=null, alternative=alternative)
        ref = sm_quiet(
            sm_test_2indep,
            x1,
            n1,
            x2,
            n2,
            value=null,
            method="score",
            compare="diff",
            alternative=SM_ALTERNATIVE[alternative],
            correction=True,
        )
        ok = np.isfinite(ref.statistic)
        assert ok.sum() > 400
        np.testing.assert_allclose(fields(res, "statistic")[ok], ref.statistic[ok], rtol=1e-8, atol=1e-8)
        assert_p_close(fields(res, "p_value")[ok], ref.pvalue[ok])


# ----------------------------------------------------------------------------------- chi-square


@pytest.mark.parametrize("yates", [False, True])
def test_chi_square_matches_scipy(yates):
    # scipy.stats.chi2_contingency([[x_t, n_t - x_t], [x_c, n_c - x_c]], correction=yates).
    rng = np.random.default_rng(239 + int(yates))
    x1, n1, x2, n2 = random_tables(rng, 700)
    keep = (x1 + x2 > 0) & (x1 + x2 < n1 + n2)  # scipy refuses a zero expected count
    x1, n1, x2, n2 = (a[keep] for a in (x1, n1, x2, n2))
    res = compare(x1, n1, x2, n2, method="chi-square", continuity_correction=yates)
    for i in range(x1.size):
        ref = chi2_contingency([[x1[i], n1[i] - x1[i]], [x2[i], n2[i] - x2[i]]], correction=yates)
        assert res[i].statistic == pytest.approx(ref.statistic, rel=1e-9, abs=1e-12)
        assert res[i].p_value == pytest.approx(ref.pvalue, rel=1e-9, abs=1e-300)


def test_yates_chi_square_is_the_squared_corrected_pooled_z():
    # Algebraic identity (Fleiss, Levin & Paik 2003, ch. 6; from memory): Yates' chi-square equals the
    # square of the continuity-corrected pooled z, and Pearson's the square of the pooled z.
    rng = np.random.default_rng(241)
    x1, n1, x2, n2 = random_tables(rng, 1500)
    keep = (x1 + x2 > 0) & (x1 + x2 < n1 + n2)
    x1, n1, x2, n2 = (a[keep] for a in (x1, n1, x2, n2))
    for cc in (False, True):
        zres = compare(x1, n1, x2, n2, method="z-pooled", continuity_correction=cc)
        chi = compare(x1, n1, x2, n2, method="chi-square", continuity_correction=cc)
        z = fields(zres, "statistic")
        np.testing.assert_allclose(fields(chi, "statistic"), z**2, rtol=1e-12, atol=1e-14)
        # Two-sided pooled z and chi-square give the same p-value.
        np.testing.assert_allclose(fields(chi, "p_value"), fields(zres, "p_value"), rtol=1e-12, atol=0)


# ---------------------------------------------------------------------------------- Fisher exact


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_fisher_exact_matches_scipy(alternative):
    # scipy.stats.fisher_exact([[x_t, n_t - x_t], [x_c, n_c - x_c]], alternative=...): "greater" is
    # odds ratio > 1, i.e. a higher treatment rate, as ours.
    rng = np.random.default_rng(251 + ALTERNATIVES.index(alternative))
    x1, n1, x2, n2 = random_tables(rng, 400, max_n=300)
    res = compare(x1, n1, x2, n2, method="fisher-exact", alternative=alternative)
    for i in range(x1.size):
        ref = fisher_exact([[x1[i], n1[i] - x1[i]], [x2[i], n2[i] - x2[i]]], alternative=alternative)
        assert res[i].p_value == pytest.approx(ref.pvalue, rel=1e-9, abs=1e-300), (x1[i], n1[i], x2[i], n2[i])
        if np.isfinite(ref.statistic):
            assert res[i].statistic == pytest.approx(ref.statistic, rel=1e-12)
        else:
            assert res[i].statistic is None


@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_fisher_odds_ratio_interval_matches_scipy_conditional(alternative):
    # The interval reported with Fisher's test on the odds-ratio scale is the conditional exact one
    # with the test's sidedness: scipy.stats.contingency.odds_ratio(kind="conditional")
    # .confidence_interval(0.95, alternative=...).
    rng = np.random.default_rng(257)
    x1, n1, x2, n2 = random_tables(rng, 25, max_n=60)
    res = compare(x1, n1, x2, n2, method="fisher-exact", effect="odds-ratio", alternative=alternative)
    for i, r in enumerate(res):
        ref = scipy_odds_ratio([[x1[i], n1[i] - x1[i]], [x2[i], n2[i] - x2[i]]], kind="conditional")
        ci = ref.confidence_interval(confidence_level=0.95, alternative=alternative)
        assert r.interval.method == "conditional-exact"
        assert r.interval.lower == pytest.approx(ci.low, rel=1e-9, abs=1e-300)
        assert (
            (r.interval.upper is None)
            if math.isinf(ci.high)
            else r.interval.upper == pytest.approx(ci.high, rel=1e-9)
        )


# ---------------------------------------------------------------------------------- edge cases

EDGE_TABLES = [
    (0, 1, 0, 1),
    (1, 1, 1, 1),
    (0, 1, 1, 1),
    (1, 1, 0, 1),
    (0, 50, 0, 80),
    (50, 50, 80, 80),
    (50, 50, 0, 80),
    (0, 50, 80, 80),
    (7, 19, 7, 19),
    (0, 10**12, 0, 10**12),
    (10**12, 10**12, 10**12, 10**12),
    (1, 10**12, 0, 10**12),
    (5 * 10**11, 10**12, 4 * 10**11, 10**12),
    (10**12, 10**12, 0, 1),
    (3, 7, 10**12, 10**12),
]


def _finite_or_none(v):
    return v is None or (isinstance(v, float) and math.isfinite(v))


@pytest.mark.parametrize(
    "method",
    [
        "auto",
        "z-pooled",
        "z-unpooled",
        "score",
        "chi-square",
        "fisher-exact",
        "boschloo-exact",
        "barnard-exact",
    ],
)
def test_edge_cases_never_give_nan_or_infinity(method):
    # 0 successes, all successes, one trial, 10^12 trials, identical groups: every number is finite or
    # None, p in [0, 1], and the summary is a sentence. Exact methods refuse groups beyond their
    # documented size with a ValueError that names the alternative.
    effects = ["difference"] if method == "z-unpooled" else ["difference", "ratio", "odds-ratio"]
    alternatives = ["two-sided"] if method == "chi-square" else list(ALTERNATIVES)
    tables = EDGE_TABLES
    if method in ("fisher-exact", "boschloo-exact", "barnard-exact"):
        tables = [t for t in EDGE_TABLES if max(t[1], t[3]) <= 1000]
        for big in (t for t in EDGE_TABLES if max(t[1], t[3]) > 1000):
            with pytest.raises(ValueError, match="trials"):
                compare(*big, method=method)
    cols = [np.array(c, dtype=np.int64) for c in zip(*tables, strict=True)]
    for effect in effects:
        for alternative in alternatives:
            for cc in [False, True] if method in ("z-pooled", "z-unpooled", "chi-square") else [False]:
                results = compare(
                    *cols, method=method, effect=effect, alternative=alternative, continuity_correction=cc
                )
                for table, r in zip(tables, results, strict=True):
                    ctx = (table, effect, alternative, cc)
                    for name in ("statistic", "p_value", "log10_p_value"):
                        assert _finite_or_none(getattr(r, name)), (name, ctx, getattr(r, name))
                    assert r.p_value is None or 0.0 <= r.p_value <= 1.0, ctx
                    assert r.reject_null in (None, True, False)
                    assert _finite_or_none(r.interval.lower) and _finite_or_none(r.interval.upper), ctx
                    e = r.estimate
                    for v in (e.control_rate, e.treatment_rate, e.difference, e.relative_lift, e.odds_ratio):
                        assert _finite_or_none(v), ctx
                    assert (
                        r.summary.endswith(".") and "nan" not in r.summary.lower() and "inf" not in r.summary
                    )
                    if r.interval.lower is not None and r.interval.upper is not None:
                        assert r.interval.lower <= r.interval.upper, ctx
                # A batch equals the single calls (DESIGN.md section 2): spot-check one table.
                (single,) = compare(
                    *tables[3],
                    method=method,
                    effect=effect,
                    alternative=alternative,
                    continuity_correction=cc,
                )
                assert single == results[3]


@pytest.mark.parametrize("alternative", ["greater", "less"])
@pytest.mark.parametrize("cc", [False, True])
def test_one_sided_wald_interval_with_zero_standard_error_emits_no_warning(alternative, cc):
    # Regression: the open side of a one-sided Wald bound multiplies an infinite critical value by a zero
    # standard error; that must neither warn nor leak into the result.
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        (r,) = compare(0, 1, 0, 1, method="z-unpooled", alternative=alternative, continuity_correction=cc)
        (s,) = compare(3, 3, 0, 5, method="z-unpooled", alternative=alternative, continuity_correction=cc)
    assert r.p_value == 1.0 and r.statistic is None
    assert s.p_value is None and s.reject_null is None
    for res, (n1, n2) in ((r, (1, 1)), (s, (3, 5))):
        # The open side is the edge of the difference scale; the other is d -+ the correction (se = 0).
        assert (res.interval.lower == -1.0) if alternative == "less" else (res.interval.upper == 1.0)
        half = 0.5 * (1 / n1 + 1 / n2) if cc else 0.0
        d = res.estimate.difference
        if alternative == "greater":
            assert res.interval.lower == pytest.approx(max(-1.0, d - half), abs=1e-12)
        else:
            assert res.interval.upper == pytest.approx(min(1.0, d + half), abs=1e-12)


def _log10_two_sided_tail(z: float) -> float:
    """log10 of 2 Phi(-|z|) from the asymptotic series (A&S 26.2.12), standard library only."""
    z = abs(z)
    log_tail = (
        -z * z / 2 - math.log(z) - 0.5 * math.log(2 * math.pi) + math.log1p(-1 / z**2 + 3 / z**4 - 15 / z**6)
    )
    return (math.log(2.0) + log_tail) / math.log(10.0)


def test_p_values_far_below_the_smallest_double():
    # 10^12 trials per group, rates 0.5 vs 0.4: z ~ 142,134, log10 p ~ -4.39e9. The p-value underflows
    # to 0.0 (a float >= 0) and log10 p stays finite and matches the asymptotic series to 1e-9 relative.
    n = 10**12
    x1, x2 = 5 * 10**11, 4 * 10**11
    pbar = (x1 + x2) / (2 * n)
    z_pooled = (x1 / n - x2 / n) / math.sqrt(pbar * (1 - pbar) * 2 / n)
    (r,) = compare(x1, n, x2, n, method="z-pooled")
    assert r.statistic == pytest.approx(z_pooled, rel=1e-9)
    assert isinstance(r.p_value, float) and r.p_value == 0.0 and r.reject_null is True
    assert r.log10_p_value == pytest.approx(_log10_two_sided_tail(z_pooled), rel=1e-9)
    assert r.log10_p_value == pytest.approx(-4.39e9, rel=1e-3)
    assert any("log10_p_value" in w for w in r.warnings) and "10^" in r.summary
    # Same for chi-square (two-sided), the unpooled z and the score test, each with its own statistic.
    (c,) = compare(x1, n, x2, n, method="chi-square")
    assert c.log10_p_value == pytest.approx(_log10_two_sided_tail(z_pooled), rel=1e-9)
    se = math.sqrt(0.5 * 0.5 / n + 0.4 * 0.6 / n)
    (u,) = compare(x1, n, x2, n, method="z-unpooled")
    assert u.log10_p_value == pytest.approx(_log10_two_sided_tail(0.1 / se), rel=1e-9)
    for effect in ("difference", "ratio", "odds-ratio"):
        (s,) = compare(x1, n, x2, n, method="score", effect=effect)
        assert s.p_value == 0.0 and s.log10_p_value == pytest.approx(
            _log10_two_sided_tail(s.statistic), rel=1e-9
        )
    # One-sided: "greater" halves the two-sided p (log10 2 less); "less" is essentially 1.
    (g,) = compare(x1, n, x2, n, method="z-pooled", alternative="greater")
    assert g.log10_p_value == pytest.approx(_log10_two_sided_tail(z_pooled) - math.log10(2.0), rel=1e-9)
    (lo,) = compare(x1, n, x2, n, method="z-pooled", alternative="less")
    assert lo.p_value == 1.0 and lo.log10_p_value == 0.0 and lo.reject_null is False


def test_identical_groups_are_not_significant():
    for method in ("z-pooled", "z-unpooled", "score", "chi-square", "fisher-exact"):
        for table in [(7, 19, 7, 19), (3 * 10**5, 10**6, 3 * 10**5, 10**6)]:
            if method == "fisher-exact" and table[1] > 1000:
                continue
            (r,) = compare(*table, method=method)
            assert r.p_value == pytest.approx(1.0, abs=1e-12) and r.reject_null is False
            assert r.estimate.difference == 0.0
