"""Reference checks for proportio.stats.score (restricted MLEs and the score statistic).

Sources used here:

* A direct numerical maximisation of the binomial likelihood under the constraint (scipy.optimize
  ``minimize_scalar``, method "bounded", tight ``xatol``, then a second bounded pass on a narrow
  bracket around the first optimum). It shares nothing with the closed-form roots of the
  implementation, so it is the arbiter wherever a closed form is in doubt.
* statsmodels 0.15 ``score_test_proportions_2indep`` (``correction=True`` is Miettinen & Nurminen
  1985, Statistics in Medicine 4:213-226; ``correction=False`` is Farrington & Manning 1990,
  Statistics in Medicine 9:1447-1454) and ``proportions_ztest`` (pooled z).
* statsmodels 0.15 solves the restricted MLE of the difference from a cubic whose linear coefficient
  reads ``(count0 * diff - nobs - 2 * count0) * diff + count``; the likelihood maximisation below shows
  that the coefficient must be ``(nobs0 * diff - ...)``. Its restricted rates (and therefore its score
  statistic for a non-zero null difference) are right only where ``count0 == nobs0`` (the control
  group has only successes) or at a null difference of 0 (where it uses the pooled rate). The
  difference comparison against statsmodels is restricted to those inputs, and
  ``test_statsmodels_difference_cubic_is_wrong_elsewhere`` records the reason.

Group 1 is the treatment, group 2 the control throughout (statsmodels' ``count1`` / ``count2``).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.optimize import minimize_scalar
from scipy.special import expit, xlog1py, xlogy
from statsmodels.stats.proportion import proportions_ztest, score_test_proportions_2indep

from proportio.stats import score
from reference_support import restricted_difference_reference  # tests/ is on sys.path

EFFECTS = ("difference", "ratio", "odds-ratio")
SM_COMPARE = {"difference": "diff", "ratio": "ratio", "odds-ratio": "odds-ratio"}
RESTRICTED = {
    "difference": score.restricted_rates_difference,
    "ratio": score.restricted_rates_ratio,
    "odds-ratio": score.restricted_rates_odds_ratio,
}


# ------------------------------------------------------------------------------------------ helpers


def neg_log_likelihood(x1, n1, x2, n2, p1, p2) -> float:
    """Binomial negative log-likelihood (constant dropped); xlogy makes 0 * log 0 = 0."""
    return float(-(xlogy(x1, p1) + xlog1py(n1 - x1, -p1) + xlogy(x2, p2) + xlog1py(n2 - x2, -p2)))


def brute_force_restricted(x1, n1, x2, n2, effect: str, value: float):
    """Maximise the likelihood under the constraint numerically; return ((p1, p2), nll).

    The difference and ratio are searched over the feasible control rate, the odds ratio over the
    control log-odds (the likelihood is concave there). A second bounded pass over a narrow
    bracket recentred on the first optimum removes the relative tolerance ``sqrt(eps) * |x|`` of
    scipy's bounded Brent search.
    """
    if effect == "difference":
        lo, hi = max(0.0, -value), min(1.0, 1.0 - value)

        def rates(u):
            return min(max(u + value, 0.0), 1.0), u
    elif effect == "ratio":
        lo, hi = 0.0, min(1.0, 1.0 / value)

        def rates(u):
            return min(value * u, 1.0), u
    else:
        lo, hi = -40.0, 40.0
        log_psi = math.log(value)

        def rates(u):
            return float(expit(u + log_psi)), float(expit(u))

    def f(u):
        return neg_log_likelihood(x1, n1, x2, n2, *rates(u))

    first = minimize_scalar(f, bounds=(lo, hi), method="bounded", options={"xatol": 1e-12})
    c = first.x
    h = 1e-5 * max(1.0, abs(c))
    second = minimize_scalar(
        lambda s: f(c + s),
        bounds=(max(lo - c, -h), min(hi - c, h)),
        method="bounded",
        options={"xatol": 1e-15},
    )
    best = c + second.x if second.fun <= first.fun else c
    return rates(best), min(first.fun, second.fun)


def random_tables(rng: np.random.Generator, size: int, max_n: int = 400):
    """Random (x1, n1, x2, n2) with a share of zeros, all-successes and one-trial groups."""
    n1 = rng.integers(1, max_n, size)
    n2 = rng.integers(1, max_n, size)
    kind = rng.integers(0, 8, size)
    n1 = np.where(kind == 6, 1, n1)
    x1 = np.floor(rng.uniform(0, 1, size) * (n1 + 1)).astype(np.int64)
    x2 = np.floor(rng.uniform(0, 1, size) * (n2 + 1)).astype(np.int64)
    x1 = np.where(kind == 0, 0, np.where(kind == 1, n1, x1))
    x2 = np.where(kind == 2, 0, np.where(kind == 3, n2, x2))
    return x1, n1, x2, n2


def random_null(rng: np.random.Generator, effect: str) -> float:
    if effect == "difference":
        return float(rng.uniform(-0.99, 0.99))
    if effect == "ratio":
        return float(np.exp(rng.uniform(-4.0, 4.0)))
    return float(np.exp(rng.uniform(-6.0, 6.0)))


def f64(*values):
    return tuple(np.float64(v) for v in values)


def sm_score(x1, n1, x2, n2, value, effect, correction=True):
    """statsmodels 0.15 score_test_proportions_2indep, silencing its divide warnings at the edges."""
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        return score_test_proportions_2indep(
            x1, n1, x2, n2, value=value, compare=SM_COMPARE[effect], correction=correction
        )


# ---------------------------------------------------------------------------- restricted MLEs


@pytest.mark.parametrize("effect", EFFECTS)
def test_restricted_mle_matches_direct_maximisation(effect):
    # Arbiter: direct numerical maximisation of the constrained binomial likelihood (scipy.optimize
    # minimize_scalar, bounded). 300 seeded inputs per effect, zeros and all-successes included.
    rng = np.random.default_rng(20240611 + EFFECTS.index(effect))
    x1s, n1s, x2s, n2s = random_tables(rng, 300)
    worst = 0.0
    for x1, n1, x2, n2 in zip(x1s.tolist(), n1s.tolist(), x2s.tolist(), n2s.tolist(), strict=True):
        value = random_null(rng, effect)
        (b1, b2), best_nll = brute_force_restricted(x1, n1, x2, n2, effect, value)
        q1, q2 = RESTRICTED[effect](*f64(x1, n1, x2, n2), value)
        q1, q2 = float(q1), float(q2)
        worst = max(worst, abs(q1 - b1), abs(q2 - b2))
        assert abs(q1 - b1) <= 1e-7 and abs(q2 - b2) <= 1e-7, (x1, n1, x2, n2, value, (q1, q2), (b1, b2))
        # The closed form is never beaten by the numerical search (beyond rounding of the nll).
        assert neg_log_likelihood(x1, n1, x2, n2, q1, q2) <= best_nll + 1e-10 * (1.0 + abs(best_nll))
        # ... and satisfies the constraint.
        if effect == "difference":
            assert q1 - q2 == pytest.approx(value, abs=1e-12)
        elif effect == "ratio" and q2 > 0:
            assert q1 / q2 == pytest.approx(value, rel=1e-9)
    assert worst < 1e-7


@pytest.mark.parametrize("effect", EFFECTS)
def test_restricted_rates_at_no_effect_are_the_pooled_rate(effect):
    # Under p1 = p2 the MLE is the pooled rate (x1 + x2) / (n1 + n2) (elementary; any textbook).
    rng = np.random.default_rng(7)
    x1, n1, x2, n2 = (a.astype(np.float64) for a in random_tables(rng, 500))
    q1, q2 = RESTRICTED[effect](x1, n1, x2, n2, score.NO_EFFECT[effect])
    pooled = (x1 + x2) / (n1 + n2)
    np.testing.assert_allclose(q1, pooled, rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(q2, pooled, rtol=1e-12, atol=1e-15)


# ----------------------------------------------------------------- score statistic vs statsmodels


@pytest.mark.parametrize("effect", ["ratio", "odds-ratio"])
@pytest.mark.parametrize("correction", [True, False])
def test_score_statistic_matches_statsmodels_ratio_and_odds_ratio(effect, correction):
    # statsmodels 0.15 score_test_proportions_2indep(compare="ratio"/"odds-ratio"): same restricted
    # MLE and variance. statsmodels clips the odds-ratio restricted rates to [1e-10, 1 - 1e-10], so
    # inputs whose restricted rates come that close to 0 or 1 are left out.
    rng = np.random.default_rng(11 + 2 * EFFECTS.index(effect) + int(correction))
    x1s, n1s, x2s, n2s = random_tables(rng, 1500)
    compared = 0
    for x1, n1, x2, n2 in zip(x1s.tolist(), n1s.tolist(), x2s.tolist(), n2s.tolist(), strict=True):
        value = random_null(rng, effect)
        q1, q2 = RESTRICTED[effect](*f64(x1, n1, x2, n2), value)
        if not (1e-8 < q1 < 1 - 1e-8 and 1e-8 < q2 < 1 - 1e-8):
            continue
        ref = sm_score(x1, n1, x2, n2, value, effect, correction)
        z = float(score.score_statistic(*f64(x1, n1, x2, n2), value, effect, correction))
        assert math.isfinite(ref.statistic)
        assert z == pytest.approx(ref.statistic, rel=1e-9, abs=1e-9), (x1, n1, x2, n2, value)
        assert float(q1) == pytest.approx(ref.prop1_null, rel=1e-9, abs=1e-12)
        assert float(q2) == pytest.approx(ref.prop2_null, rel=1e-9, abs=1e-12)
        compared += 1
    assert compared > 1000


def test_score_statistic_matches_statsmodels_difference_where_its_cubic_is_right():
    # statsmodels 0.15 score_test_proportions_2indep(compare="diff", correction=True/False) is right
    # (a) at a null difference of 0, where it uses the pooled rate, and (b) where the control group
    # has only successes (count0 == nobs0 makes its mistyped coefficient the right one; see the
    # module docstring). In (b) its restricted rates are first checked against the likelihood
    # maximisation, so the agreement is established independently of our closed form.
    rng = np.random.default_rng(23)
    x1s, n1s, x2s, n2s = random_tables(rng, 1200)
    compared = 0
    for i, (x1, n1, x2, n2) in enumerate(
        zip(x1s.tolist(), n1s.tolist(), x2s.tolist(), n2s.tolist(), strict=True)
    ):
        correction = bool(i % 2)
        if i % 3 == 0:
            value = 0.0
        else:
            x2 = n2  # case (b)
            value = float(rng.uniform(-0.95, 0.95))
        ref = sm_score(x1, n1, x2, n2, value, "difference", correction)
        if not math.isfinite(ref.statistic):
            continue  # zero variance (e.g. both rates 0): statsmodels divides by zero
        if value != 0.0:
            (b1, b2), _ = brute_force_restricted(x1, n1, x2, n2, "difference", value)
            if not (abs(ref.prop1_null - b1) <= 1e-7 and abs(ref.prop2_null - b2) <= 1e-7):
                continue
        z = float(score.score_statistic(*f64(x1, n1, x2, n2), value, "difference", correction))
        assert z == pytest.approx(ref.statistic, rel=1e-8, abs=1e-8), (x1, n1, x2, n2, value, correction)
        compared += 1
    assert compared > 900


def test_statsmodels_difference_cubic_is_wrong_elsewhere():
    # Why the difference comparison above is restricted. Worked input: treatment 7/50, control 1/77,
    # null difference -0.418. statsmodels 0.15 returns a restricted treatment rate of about -0.077
    # (outside [0, 1]) and a statistic of about 15.28; the likelihood maximisation gives rates
    # (0.0384, 0.4564), which ours reproduce, and our statistic is about 8.63.
    x1, n1, x2, n2, value = 7, 50, 1, 77, -0.418
    ref = sm_score(x1, n1, x2, n2, value, "difference")
    (b1, b2), best_nll = brute_force_restricted(x1, n1, x2, n2, "difference", value)
    q1, q2 = score.restricted_rates_difference(*f64(x1, n1, x2, n2), value)
    assert ref.prop1_null < 0.0  # statsmodels: infeasible restricted rate
    assert abs(ref.prop1_null - b1) > 0.1
    assert float(q1) == pytest.approx(b1, abs=1e-7) and float(q2) == pytest.approx(b2, abs=1e-7)
    z = float(score.score_statistic(*f64(x1, n1, x2, n2), value, "difference", True))
    assert abs(z - ref.statistic) > 1.0
    # Hand-evaluated with the restricted rates from the likelihood maximisation (MN 1985 variance).
    n = n1 + n2
    var = (b1 * (1 - b1) / n1 + b2 * (1 - b2) / n2) * n / (n - 1)
    assert z == pytest.approx((x1 / n1 - x2 / n2 - value) / math.sqrt(var), rel=1e-6)

    # It is the linear coefficient: statsmodels' own cubic, transcribed with nobs0 * diff in place of
    # count0 * diff, reproduces our rates on random inputs, while as published it misses the
    # likelihood maximum on most inputs with a non-zero null and a control rate below 1.
    def sm_cubic(count1, nobs1, count0, nobs0, diff, fixed: bool):
        nobs, count = nobs1 + nobs0, count1 + count0
        tmp3 = nobs
        tmp2 = (nobs1 + 2 * nobs0) * diff - nobs - count
        tmp1 = ((nobs0 if fixed else count0) * diff - nobs - 2 * count0) * diff + count
        tmp0 = count0 * diff * (1 - diff)
        q = (tmp2 / (3 * tmp3)) ** 3 - tmp1 * tmp2 / (6 * tmp3**2) + tmp0 / (2 * tmp3)
        p = np.sign(q) * np.sqrt((tmp2 / (3 * tmp3)) ** 2 - tmp1 / (3 * tmp3))
        a = (np.pi + np.arccos(q / p**3)) / 3
        prop0 = 2 * p * np.cos(a) - tmp2 / (3 * tmp3)
        return prop0 + diff, prop0

    rng = np.random.default_rng(31)
    missed = tried = 0
    for _ in range(200):
        n1_, n2_ = int(rng.integers(2, 300)), int(rng.integers(2, 300))
        x1_, x2_ = int(rng.integers(0, n1_ + 1)), int(rng.integers(0, n2_))  # control rate below 1
        d = float(rng.uniform(-0.9, 0.9))
        if abs(d) < 0.05:
            continue
        tried += 1
        ours = score.restricted_rates_difference(*f64(x1_, n1_, x2_, n2_), d)
        with np.errstate(all="ignore"):
            fixed = sm_cubic(x1_, n1_, x2_, n2_, d, True)
            published = sm_cubic(x1_, n1_, x2_, n2_, d, False)
        assert fixed[0] == pytest.approx(float(ours[0]), abs=1e-10)
        (b1_, _), _ = brute_force_restricted(x1_, n1_, x2_, n2_, "difference", d)
        if not (abs(published[0] - b1_) <= 1e-6):
            missed += 1
    assert missed > tried // 2


# ------------------------------------------------------------ N/(N-1) factor and the pooled z


@pytest.mark.parametrize("effect", EFFECTS)
def test_miettinen_nurminen_factor(effect):
    # Miettinen & Nurminen (1985), p. 215: the variance carries N/(N-1), N = n1 + n2, so
    # z_FM^2 = z_MN^2 * N / (N - 1), z_FM being the Farrington-Manning (uncorrected) statistic.
    rng = np.random.default_rng(41)
    x1, n1, x2, n2 = (a.astype(np.float64) for a in random_tables(rng, 2000))
    value = np.array([random_null(rng, effect) for _ in range(x1.size)])
    z_mn = score.score_statistic(x1, n1, x2, n2, value, effect, correction=True)
    z_fm = score.score_statistic(x1, n1, x2, n2, value, effect, correction=False)
    finite = np.isfinite(z_mn)
    assert finite.sum() > 1500
    big_n = n1 + n2
    np.testing.assert_allclose(
        z_fm[finite] ** 2, z_mn[finite] ** 2 * big_n[finite] / (big_n[finite] - 1), rtol=1e-12
    )
    # Same sign, and the infinities coincide.
    assert np.array_equal(np.sign(z_mn), np.sign(z_fm))
    assert np.array_equal(np.isinf(z_mn), np.isinf(z_fm))


@pytest.mark.parametrize("effect", ["ratio", "odds-ratio"])
def test_statsmodels_uncorrected_statistic_carries_the_same_factor(effect):
    # statsmodels 0.15 score_test_proportions_2indep(correction=False) against our FM statistic.
    rng = np.random.default_rng(43)
    x1s, n1s, x2s, n2s = random_tables(rng, 400)
    compared = 0
    for x1, n1, x2, n2 in zip(x1s.tolist(), n1s.tolist(), x2s.tolist(), n2s.tolist(), strict=True):
        value = random_null(rng, effect)
        q1, q2 = RESTRICTED[effect](*f64(x1, n1, x2, n2), value)
        if not (1e-8 < q1 < 1 - 1e-8 and 1e-8 < q2 < 1 - 1e-8):
            continue
        z_mn = sm_score(x1, n1, x2, n2, value, effect, True).statistic
        z_fm = sm_score(x1, n1, x2, n2, value, effect, False).statistic
        n = n1 + n2
        assert z_fm**2 == pytest.approx(z_mn**2 * n / (n - 1), rel=1e-9, abs=1e-12)
        ours = float(score.score_statistic(*f64(x1, n1, x2, n2), value, effect, correction=False))
        assert ours == pytest.approx(z_fm, rel=1e-9, abs=1e-9)
        compared += 1
    assert compared > 250


@pytest.mark.parametrize("effect", EFFECTS)
def test_farrington_manning_at_no_effect_is_the_pooled_z(effect):
    # statsmodels 0.15 proportions_ztest(count=[x1, x2], nobs=[n1, n2]): the pooled z statistic.
    rng = np.random.default_rng(53)
    x1s, n1s, x2s, n2s = random_tables(rng, 2000)
    compared = 0
    for x1, n1, x2, n2 in zip(x1s.tolist(), n1s.tolist(), x2s.tolist(), n2s.tolist(), strict=True):
        if x1 + x2 in (0, n1 + n2):
            continue  # pooled rate 0 or 1: statsmodels divides by zero
        ref, _ = proportions_ztest([x1, x2], [n1, n2])
        z = float(
            score.score_statistic(*f64(x1, n1, x2, n2), score.NO_EFFECT[effect], effect, correction=False)
        )
        assert z == pytest.approx(ref, rel=1e-9, abs=1e-12), (x1, n1, x2, n2)
        compared += 1
    assert compared > 1500


# ------------------------------------------------------------------------------ degenerate inputs


@pytest.mark.parametrize("effect", EFFECTS)
def test_statistic_is_never_nan(effect):
    # Documented contract of score_statistic: 0 where the data sit at the hypothesised value with a
    # zero restricted variance, +-inf otherwise; never NaN.
    tables = [
        (0, 1, 0, 1),
        (1, 1, 1, 1),
        (0, 1, 1, 1),
        (1, 1, 0, 1),
        (0, 10, 0, 20),
        (10, 10, 20, 20),
        (10, 10, 0, 20),
        (0, 10, 20, 20),
        (0, 10**12, 0, 10**12),
        (10**12, 10**12, 5, 10**12),
        (5 * 10**11, 10**12, 4 * 10**11, 10**12),
        (3, 7, 3, 7),
    ]
    values = {
        "difference": [-0.999, -0.5, 0.0, 0.3, 0.999],
        "ratio": [1e-6, 0.5, 1.0, 2.0, 1e6],
        "odds-ratio": [1e-6, 0.5, 1.0, 2.0, 1e6],
    }[effect]
    for x1, n1, x2, n2 in tables:
        for v in values:
            for correction in (True, False):
                z = score.score_statistic(*f64(x1, n1, x2, n2), v, effect, correction)
                assert not np.isnan(z), (x1, n1, x2, n2, v)
    # Identical groups at no effect: the statistic is exactly 0.
    for x, n in [(0, 5), (5, 5), (2, 5), (3 * 10**11, 10**12)]:
        z = score.score_statistic(*f64(x, n, x, n), score.NO_EFFECT[effect], effect, True)
        assert float(z) == 0.0


# ------------------------------------------------------------------- fixed defects (regression tests)


def test_odds_ratio_statistic_far_above_the_data_is_large_and_negative():
    # Treatment 19/34, control 22/46: the sample odds ratio is 1.38. At a hypothesised odds ratio of
    # e^40 the data lie far below it, so the statistic must be strongly negative; it is -1.6e2 at
    # e^10 and -2.4e4 at e^20 (ours), and statsmodels 0.15 score_test_proportions_2indep agrees in sign.
    a = f64(19, 34, 22, 46)
    assert float(score.score_statistic(*a, math.exp(20.0), "odds-ratio")) < -1e4
    assert sm_score(19, 34, 22, 46, math.exp(40.0), "odds-ratio").statistic < -1.96
    assert float(score.score_statistic(*a, math.exp(40.0), "odds-ratio")) < -1.96


def test_odds_ratio_statistic_tends_to_zero_when_control_has_only_successes():
    # Treatment 179/283, control 160/160: the sample odds ratio is 0 and the statistic rises
    # monotonically towards 0 as the hypothesised odds ratio falls (-4.4e-4 at e^-20, -3.0e-6 at
    # e^-30), so below e^-30 it must lie in [z(e^-30), 0].
    a = f64(179, 283, 160, 160)
    z30 = float(score.score_statistic(*a, math.exp(-30.0), "odds-ratio"))
    assert -1e-5 < z30 < 0.0
    for log_psi in (-40.0, -46.0, -60.0, -70.0):
        z = float(score.score_statistic(*a, math.exp(log_psi), "odds-ratio"))
        assert z30 - 1e-12 <= z <= 0.0, log_psi



# Regression: rare events in huge groups once defeated the closed-form restricted MLE (fixed by
# Newton polishing with a bracketed fallback in score._difference_root).


def _rare(table, d):
    return pytest.param(table, d)


@pytest.mark.parametrize(
    ("table", "d"),
    [
        ((5, 10**8, 1, 10**8), -1e-8),
        ((5, 10**8, 1, 10**8), 1e-7),
        ((3, 10**12, 0, 10**12), -1e-10),
        ((5, 10**7, 1, 10**7), -1e-7),
        _rare((5, 10**9, 1, 10**9), -1e-9),
        _rare((3, 10**12, 0, 10**12), -8.414588206870484e-13),
        _rare((3, 10**12, 0, 10**12), 8.821188092293657e-12),
        _rare((10**9 - 5, 10**9, 10**9 - 1, 10**9), 1.1278009411968803e-09),
    ],
)
def test_restricted_difference_rates_for_rare_events(table, d):
    # Reference: the score equation of the constrained likelihood solved by brentq; 1e-6 relative on each
    # rate and on its complement (the small one of the two carries the information near 1).
    ref1, ref2 = restricted_difference_reference(*table, d)
    q1, q2, c1, c2 = score.restricted_rates_difference_full(*f64(*table), d)
    assert float(q1) == pytest.approx(ref1, rel=1e-6, abs=1e-300)
    assert float(q2) == pytest.approx(ref2, rel=1e-6, abs=1e-300)
    if ref1 > 0.5:
        # Complements recomputed from the reference's own p2 offset to keep their relative precision.
        assert float(c1) == pytest.approx(1.0 - ref1, rel=1e-6)
        assert float(c2) == pytest.approx(1.0 - ref2, rel=1e-6)
    # The likelihood at our rates is never below the reference's (beyond rounding).
    ours = neg_log_likelihood(*table, float(q1), float(q2))
    assert ours <= neg_log_likelihood(*table, ref1, ref2) + 1e-9 * (1.0 + abs(ours))
