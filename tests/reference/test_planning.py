"""Reference checks for proportio.stats.planning (sample size, power, detectable effect).

Sources used here:

* Hand computations of the published closed forms, written out below with the standard library's
  ``statistics.NormalDist`` so that they share no code path with the implementation (which uses
  ``scipy.special``): the pooled-variance formula and the continuity correction (Fleiss, Levin &
  Paik 2003, ch. 4; Fleiss, Tytun & Ury 1980, Biometrics 36:343-346), the unpooled formulas for
  superiority, non-inferiority and equivalence (Chow, Shao & Wang 2008, ch. 4), and the
  restricted-maximum-likelihood null variance (Farrington & Manning 1990, Statistics in Medicine
  9:1447-1454).  The formulas are written as recalled ("from memory"); the books were not opened.
* statsmodels 0.15 ``power_proportions_2indep`` and ``samplesize_proportions_2indep_onetail``: z
  test of equal proportions, variance under the null from the pooled proportion and under the
  alternative from the separate proportions -- exactly our ``z-pooled`` superiority power without
  continuity correction, so compared to 1e-9.  Its ``value`` (null difference) must be 0, so it
  does not cover non-inferiority or equivalence.
* statsmodels 0.15 ``normal_power_het`` (normal power with separate null and alternative standard
  deviations): compared for the unpooled designs and, with the null standard deviation at the
  restricted rates found by ``scipy.optimize.brentq``, for the Farrington-Manning non-inferiority
  power.  statsmodels' own restricted estimates (``score_test_proportions_2indep``) are not used:
  for a non-zero null difference they do not solve the score equation (statsmodels issue #10269).
* statsmodels 0.15 ``NormalIndPower`` with ``proportion_effectsize`` is NOT the same formula: it
  plans on Cohen's h, the arcsine (variance-stabilising) transform, with variance 1/n on that scale.
  It is only used as a loose sanity check (a few per cent) at moderate rates.
"""

from __future__ import annotations

import math
from statistics import NormalDist

import numpy as np
import pytest
from hypothesis import HealthCheck, given, reject, settings
from hypothesis import strategies as st
from scipy.optimize import brentq, minimize_scalar
from statsmodels.stats.power import NormalIndPower, normal_power_het
from statsmodels.stats.proportion import (
    power_proportions_2indep,
    proportion_effectsize,
    samplesize_proportions_2indep_onetail,
)

from proportio.stats.planning import MAX_TRIALS, PlanResult, plan, sweep

N01 = NormalDist()


def z_upper(a: float) -> float:
    """Upper a-quantile of N(0, 1), computed independently of scipy."""
    return -N01.inv_cdf(a)


def fleiss_pooled_n(p_c: float, p_t: float, alpha_one_side: float, power: float, r: float = 1.0) -> float:
    """Fleiss, Levin & Paik (2003), ch. 4: pooled-variance size of the control group (from memory).

    n_c = [z_a sqrt(pbar qbar (1 + 1/r)) + z_b sqrt(p_c q_c + p_t q_t / r)]^2 / d^2,
    pbar = (p_c + r p_t) / (1 + r).
    """
    pbar = (p_c + r * p_t) / (1.0 + r)
    s0 = math.sqrt(pbar * (1 - pbar) * (1 + 1 / r))
    s1 = math.sqrt(p_c * (1 - p_c) + p_t * (1 - p_t) / r)
    return ((z_upper(alpha_one_side) * s0 + z_upper(1 - power) * s1) / (p_t - p_c)) ** 2


def fleiss_cc(n: float, d: float, r: float = 1.0) -> float:
    """Fleiss, Tytun & Ury (1980), Biometrics 36:343-346: continuity-corrected size (from memory)."""
    return n / 4.0 * (1.0 + math.sqrt(1.0 + 2.0 * (r + 1.0) / (r * n * abs(d)))) ** 2


# ----------------------------------------------------------------------------------------------
# Classic numbers and hand-computed closed forms
# ----------------------------------------------------------------------------------------------


def test_classic_ten_vs_twelve_percent():
    res = plan(0.10, expected_rate=0.12)
    # From memory: 10% vs 12%, two-sided 5%, 80% power needs about 3,841 per group (pooled formula).
    assert res.n_control == 3841
    # Fleiss, Levin & Paik (2003), ch. 4 pooled formula computed by hand above.
    assert res.n_control == math.ceil(fleiss_pooled_n(0.10, 0.12, 0.025, 0.80))
    assert res.n_treatment == 3841 and res.n_total == 7682
    assert res.power >= 0.8
    assert res.summary == (
        "To detect a rise from 10.0% to 12.0% with 80% power at a two-sided 5% level, "
        "plan 3,841 trials per group, 7,682 in all."
    )
    assert "Fleiss, Levin & Paik 2003" in res.formula


def test_fleiss_continuity_corrected_table_value():
    res = plan(0.05, expected_rate=0.10, continuity_correction=True)
    n = fleiss_pooled_n(0.05, 0.10, 0.025, 0.80)
    # Fleiss, Tytun & Ury (1980) correction, by hand: exact agreement with the rounded-up closed form.
    assert res.n_control == math.ceil(fleiss_cc(n, 0.05))
    # From memory: Fleiss's table (two-sided 0.05, power 0.80, 5% vs 10%, corrected) prints 474;
    # tolerance of one trial for the table's rounding.
    assert abs(res.n_control - 474) <= 1
    # Without the correction the same plan needs 435 (hand formula).
    assert plan(0.05, expected_rate=0.10).n_control == math.ceil(n) == 435


@pytest.mark.parametrize(
    ("p_c", "p_t", "alternative", "alpha", "power"),
    [
        (0.10, 0.12, "two-sided", 0.05, 0.80),
        (0.30, 0.25, "two-sided", 0.01, 0.90),
        (0.50, 0.55, "greater", 0.05, 0.80),
        (0.02, 0.01, "less", 0.10, 0.95),
        (0.85, 0.90, "two-sided", 0.05, 0.99),
    ],
)
@pytest.mark.parametrize("cc", [False, True])
def test_pooled_formula_by_hand_equal_groups(p_c, p_t, alternative, alpha, power, cc):
    a_side = alpha / 2 if alternative == "two-sided" else alpha
    n = fleiss_pooled_n(p_c, p_t, a_side, power)
    if cc:
        n = fleiss_cc(n, p_t - p_c)
    res = plan(p_c, expected_rate=p_t, alternative=alternative, alpha=alpha, power=power,
               continuity_correction=cc)
    # Fleiss, Levin & Paik (2003), ch. 4 (and Fleiss, Tytun & Ury 1980 for cc): exact for r = 1.
    assert res.n_control == res.n_treatment == math.ceil(n)
    assert res.power >= power


@pytest.mark.parametrize("r", [0.5, 1.5, 2.0, 3.0])
@pytest.mark.parametrize("cc", [False, True])
def test_unequal_allocation_against_closed_form(r, cc):
    p_c, p_t = 0.20, 0.26
    n = fleiss_pooled_n(p_c, p_t, 0.025, 0.8, r)
    if cc:
        n = fleiss_cc(n, p_t - p_c, r)
    res = plan(p_c, expected_rate=p_t, allocation_ratio=r, continuity_correction=cc)
    # Our n_c is the smallest integer reaching the power at (n_c, ceil(r n_c)); rounding n_t up can
    # make it one below the rounded-up closed form (documented), never above.
    assert res.n_control in (math.ceil(n) - 1, math.ceil(n))
    assert res.n_treatment == math.ceil(r * res.n_control)
    assert res.allocation_ratio == r
    assert res.power >= 0.8


def test_unpooled_superiority_chow_shao_wang():
    # Chow, Shao & Wang (2008), ch. 4, two-sample superiority/equality, unpooled (from memory):
    # n = (z_{a/2} + z_b)^2 (p_c q_c + p_t q_t) / d^2 per group.
    for p_c, p_t in [(0.10, 0.12), (0.65, 0.85), (0.40, 0.30)]:
        n = (z_upper(0.025) + z_upper(0.2)) ** 2 * (p_c * (1 - p_c) + p_t * (1 - p_t)) / (p_t - p_c) ** 2
        res = plan(p_c, expected_rate=p_t, method="z-unpooled")
        assert res.n_control == math.ceil(n)
        assert "Chow, Shao & Wang 2008" in res.formula


@pytest.mark.parametrize(
    ("p_c", "p_t", "margin"), [(0.10, 0.10, 0.02), (0.80, 0.82, 0.05), (0.60, 0.58, 0.10)]
)
def test_noninferiority_unpooled_chow_shao_wang(p_c, p_t, margin):
    # Chow, Shao & Wang (2008), ch. 4, non-inferiority, unpooled (from memory):
    # n = (z_a + z_b)^2 (p_c q_c + p_t q_t) / (d + margin)^2 per group, one-sided alpha.
    var = p_c * (1 - p_c) + p_t * (1 - p_t)
    n = (z_upper(0.05) + z_upper(0.2)) ** 2 * var / (p_t - p_c + margin) ** 2
    res = plan(p_c, expected_rate=p_t, design="non-inferiority", margin=margin, method="z-unpooled",
               alternative="greater")
    assert res.n_control == math.ceil(n)
    assert res.warnings == ()
    # Lower-is-better mirror image: H1 is d < margin.
    n_less = (z_upper(0.05) + z_upper(0.2)) ** 2 * var / (margin - (p_t - p_c)) ** 2
    res_less = plan(p_c, expected_rate=p_t, design="non-inferiority", margin=margin, method="z-unpooled",
                    alternative="less")
    assert res_less.n_control == math.ceil(n_less)


def _fm_restricted_by_optimizer(p_c, p_t, r, d0):
    """Farrington & Manning (1990): maximise the expected log-likelihood under p_t - p_c = d0."""

    def neg_loglik(x):
        y = x + d0
        ll_c = p_c * math.log(x) + (1 - p_c) * math.log(1 - x)
        ll_t = p_t * math.log(y) + (1 - p_t) * math.log(1 - y)
        return -(ll_c + r * ll_t)

    lo, hi = max(0.0, -d0) + 1e-12, min(1.0, 1.0 - d0) - 1e-12
    x = minimize_scalar(neg_loglik, bounds=(lo, hi), method="bounded", options={"xatol": 1e-13}).x
    return x, x + d0


def _restricted_by_root(p_c, p_t, r, d0):
    """Farrington & Manning (1990): root of the restricted score equation, by scipy.optimize.brentq.

    statsmodels 0.15 score_test_proportions_2indep would be the natural reference, but for a non-zero
    null difference its cubic has a wrong linear coefficient (statsmodels issue #10269: count0 where
    nobs0 belongs), so its restricted rates do not zero the score; it is not used here.
    """
    w_c, w_t = 1.0 / (1.0 + r), r / (1.0 + r)

    def score(x):
        y = x + d0
        return w_c * (p_c - x) / (x * (1 - x)) + w_t * (p_t - y) / (y * (1 - y))

    lo, hi = max(0.0, -d0) + 1e-14, min(1.0, 1.0 - d0) - 1e-14
    x = brentq(score, lo, hi, xtol=1e-15, rtol=1e-15)
    return x, x + d0


@pytest.mark.parametrize(("p_c", "p_t", "margin", "r"), [(0.10, 0.10, 0.02, 1.0), (0.70, 0.72, 0.05, 2.0),
                                                         (0.30, 0.28, 0.08, 0.5), (0.95, 0.95, 0.03, 1.0)])
def test_noninferiority_pooled_is_farrington_manning(p_c, p_t, margin, r):
    d0 = -margin
    rc_sm, rt_sm = _restricted_by_root(p_c, p_t, r, d0)
    rc_opt, rt_opt = _fm_restricted_by_optimizer(p_c, p_t, r, d0)
    # Two independent routes to the restricted MLE (score root, likelihood maximum) agree to the
    # bounded optimizer's tolerance.
    assert rc_sm == pytest.approx(rc_opt, abs=1e-7)
    s0 = math.sqrt(rc_sm * (1 - rc_sm) + rt_sm * (1 - rt_sm) / r)
    s1 = math.sqrt(p_c * (1 - p_c) + p_t * (1 - p_t) / r)
    # Farrington & Manning (1990) sample size, by hand with the restricted rates found above.
    n = ((z_upper(0.05) * s0 + z_upper(0.2) * s1) / (p_t - p_c + margin)) ** 2
    res = plan(p_c, expected_rate=p_t, design="non-inferiority", margin=margin, alternative="greater",
               allocation_ratio=r)
    assert "Farrington & Manning 1990" in res.formula
    if r == 1.0:
        assert res.n_control == math.ceil(n)
    else:
        assert res.n_control in (math.ceil(n) - 1, math.ceil(n))
    # The restricted variance differs from the plain unpooled one: the choice is visible.
    unpooled = plan(p_c, expected_rate=p_t, design="non-inferiority", margin=margin, alternative="greater",
                    allocation_ratio=r, method="z-unpooled")
    assert unpooled.n_control != res.n_control


def test_equivalence_equal_rates_matches_chow_shao_wang():
    # Chow, Shao & Wang (2008), ch. 4, equivalence with equal true rates (from memory):
    # n = (z_a + z_{b/2})^2 (p_c q_c + p_t q_t) / margin^2; exact for the TOST normal approximation
    # when d = 0 because both one-sided tests then fail with probability beta / 2 each.
    for p, margin, power in [(0.10, 0.03, 0.8), (0.5, 0.1, 0.9), (0.75, 0.05, 0.8)]:
        n = (z_upper(0.05) + z_upper((1 - power) / 2)) ** 2 * 2 * p * (1 - p) / margin**2
        res = plan(p, expected_rate=p, design="equivalence", margin=margin, method="z-unpooled", power=power)
        assert res.n_control == math.ceil(n)
        assert res.power >= power


@pytest.mark.parametrize(
    ("p_c", "p_t", "margin"), [(0.10, 0.105, 0.03), (0.50, 0.47, 0.10), (0.8, 0.81, 0.04)]
)
def test_equivalence_unequal_rates_between_bounds(p_c, p_t, margin):
    d = abs(p_t - p_c)
    var = p_c * (1 - p_c) + p_t * (1 - p_t)
    # Lower bound: one one-sided test alone needs (z_a + z_b)^2 var / (margin - |d|)^2 and TOST
    # power is below each single test's power (Schuirmann 1987 construction).
    n_low = (z_upper(0.05) + z_upper(0.2)) ** 2 * var / (margin - d) ** 2
    # Upper bound: Chow, Shao & Wang (2008), ch. 4 conservative form with beta / 2 (from memory);
    # mathematically, failure of TOST <= sum of the two tests' failures, each <= beta / 2 there.
    n_high = (z_upper(0.05) + z_upper(0.1)) ** 2 * var / (margin - d) ** 2
    res = plan(p_c, expected_rate=p_t, design="equivalence", margin=margin, method="z-unpooled")
    assert math.ceil(n_low) <= res.n_control <= math.ceil(n_high)
    # Power by hand (normal approximation to TOST) at the reported sizes.
    n = res.n_control
    sd = math.sqrt(var / n)
    z = z_upper(0.05)
    dd = p_t - p_c
    hand = N01.cdf((margin - dd) / sd - z) - N01.cdf((-margin - dd) / sd + z)
    assert res.power == pytest.approx(hand, rel=1e-9)
    below = plan(p_c, expected_rate=p_t, design="equivalence", margin=margin, method="z-unpooled",
                 solve_for="power", n_control=n - 1)
    assert below.power < 0.8 <= res.power


# ----------------------------------------------------------------------------------------------
# statsmodels 0.15 where the formula is the same
# ----------------------------------------------------------------------------------------------


def _random_cases(seed, k):
    rng = np.random.default_rng(seed)
    p_c = rng.uniform(0.01, 0.99, k)
    p_t = np.clip(p_c + rng.uniform(-0.3, 0.3, k), 0.005, 0.995)
    n_c = rng.integers(5, 200_000, k)
    n_t = np.maximum(1, np.round(n_c * rng.choice([0.3, 0.5, 1.0, 1.0, 2.0, 3.7], k))).astype(np.int64)
    alpha = rng.choice([0.01, 0.05, 0.1, 0.2], k)
    alt = rng.choice(["two-sided", "greater", "less"], k)
    return p_c, p_t, n_c, n_t, alpha, alt


_SM_ALT = {"two-sided": "two-sided", "greater": "larger", "less": "smaller"}


def test_pooled_power_matches_statsmodels_power_proportions_2indep():
    p_c, p_t, n_c, n_t, alpha, alt = _random_cases(1, 1500)
    checked = 0
    for i in range(len(p_c)):
        if p_t[i] == p_c[i]:
            continue
        ours = plan(p_c[i], expected_rate=p_t[i], solve_for="power", n_control=int(n_c[i]),
                    n_treatment=int(n_t[i]), alpha=alpha[i], alternative=alt[i]).power
        # statsmodels 0.15 power_proportions_2indep: sample 1 = treatment, ratio = nobs2 / nobs1;
        # null variance from the pooled rate, alternative variance unpooled -- same as z-pooled.
        ref = power_proportions_2indep(p_t[i] - p_c[i], p_c[i], int(n_t[i]), ratio=n_c[i] / n_t[i],
                                       alpha=alpha[i], alternative=_SM_ALT[alt[i]], return_results=False)
        assert ours == pytest.approx(float(ref), rel=1e-9, abs=1e-300)
        checked += 1
    assert checked > 1400


def test_unpooled_power_matches_statsmodels_normal_power_het():
    p_c, p_t, n_c, n_t, alpha, alt = _random_cases(2, 1000)
    for i in range(len(p_c)):
        if p_t[i] == p_c[i]:
            continue
        ours = plan(p_c[i], expected_rate=p_t[i], solve_for="power", n_control=int(n_c[i]),
                    n_treatment=int(n_t[i]), alpha=alpha[i], alternative=alt[i], method="z-unpooled").power
        # statsmodels 0.15 normal_power_het with std_null = std_alternative = unpooled sd (nobs = 1).
        sd = math.sqrt(p_c[i] * (1 - p_c[i]) / n_c[i] + p_t[i] * (1 - p_t[i]) / n_t[i])
        ref = normal_power_het(p_t[i] - p_c[i], 1, alpha[i], std_null=sd, std_alternative=sd,
                               alternative=_SM_ALT[alt[i]])
        assert ours == pytest.approx(float(ref), rel=1e-9, abs=1e-300)


@pytest.mark.parametrize("method", ["z-unpooled", "z-pooled"])
def test_noninferiority_power_matches_statsmodels(method):
    rng = np.random.default_rng(3)
    for _ in range(300):
        p_c = rng.uniform(0.05, 0.95)
        margin = rng.uniform(0.01, 0.15)
        alt = rng.choice(["greater", "less"])
        d = rng.uniform(-0.5, 1.0) * margin if alt == "greater" else rng.uniform(-1.0, 0.5) * margin
        p_t = p_c + d
        if not 0.01 < p_t < 0.99:
            continue
        n_c = int(rng.integers(50, 50_000))
        n_t = int(rng.integers(50, 50_000))
        ours = plan(p_c, expected_rate=p_t, design="non-inferiority", margin=margin, alternative=alt,
                    method=method, solve_for="power", n_control=n_c, n_treatment=n_t)
        d0 = -margin if alt == "greater" else margin
        if method == "z-pooled":
            # Farrington & Manning (1990) restricted rates, by scipy.optimize.brentq on the score.
            rc, rt = _restricted_by_root(p_c, p_t, n_t / n_c, d0)
        else:
            rc, rt = p_c, p_t
        sd0 = math.sqrt(rc * (1 - rc) / n_c + rt * (1 - rt) / n_t)
        sd1 = math.sqrt(p_c * (1 - p_c) / n_c + p_t * (1 - p_t) / n_t)
        shift = (p_t - p_c) - d0 if alt == "greater" else d0 - (p_t - p_c)
        # statsmodels 0.15 normal_power_het, one-sided in the direction of H1.
        ref = normal_power_het(shift, 1, 0.05, std_null=sd0, std_alternative=sd1, alternative="larger")
        # Restricted rates: closed form (ours) vs root finding (here), hence 1e-8 rather than 1e-9.
        assert ours.power == pytest.approx(float(ref), rel=1e-8, abs=1e-300)


def test_sample_size_matches_statsmodels_onetail():
    rng = np.random.default_rng(4)
    for _ in range(400):
        p_c = rng.uniform(0.02, 0.98)
        p_t = float(np.clip(p_c + rng.uniform(-0.2, 0.2), 0.01, 0.99))
        if abs(p_t - p_c) < 0.005:
            continue
        r = float(rng.choice([0.5, 1.0, 1.0, 2.0, 3.0]))
        power = float(rng.uniform(0.5, 0.99))
        alt = str(rng.choice(["two-sided", "greater", "less"]))
        if (alt == "greater" and p_t < p_c) or (alt == "less" and p_t > p_c):
            alt = "two-sided"
        res = plan(p_c, expected_rate=p_t, power=power, alternative=alt, allocation_ratio=r)
        # statsmodels 0.15 samplesize_proportions_2indep_onetail: sample 1 = control, nobs2 = r nobs1;
        # pooled null variance, unpooled alternative, one tail (alpha/2 for two-sided) -- Fleiss's form.
        ref = float(samplesize_proportions_2indep_onetail(p_c - p_t, p_t, power, ratio=r, alpha=0.05,
                                                          alternative=_SM_ALT[alt]))
        if r == 1.0:
            assert res.n_control == math.ceil(ref)
        else:
            assert res.n_control in (math.ceil(ref) - 1, math.ceil(ref))
        # Minimality, checked with statsmodels' power of the tail in the direction of the effect.
        a_side = 0.025 if alt == "two-sided" else 0.05
        tail = "larger" if p_t > p_c else "smaller"

        def near_tail(n_c, n_t, p_c=p_c, p_t=p_t, a_side=a_side, tail=tail):
            return float(power_proportions_2indep(p_t - p_c, p_c, n_t, ratio=n_c / n_t, alpha=a_side,
                                                  alternative=tail, return_results=False))

        assert near_tail(res.n_control, res.n_treatment) >= power - 1e-12
        if res.n_control > 1:
            prev = res.n_control - 1
            assert near_tail(prev, math.ceil(r * prev)) < power


def test_arcsine_formula_is_only_close():
    # statsmodels 0.15 NormalIndPower + proportion_effectsize plans on Cohen's h (arcsine scale):
    # a different approximation from the pooled one, so only closeness (within 3%) at moderate
    # rates is expected, never equality.
    for p_c, p_t in [(0.30, 0.36), (0.50, 0.45), (0.60, 0.70)]:
        h = proportion_effectsize(p_t, p_c)
        n_h = NormalIndPower().solve_power(effect_size=abs(h), alpha=0.05, power=0.8, ratio=1.0)
        ours = plan(p_c, expected_rate=p_t).n_control
        assert abs(ours - n_h) / n_h < 0.03


# ----------------------------------------------------------------------------------------------
# Properties: round trips and consistency
# ----------------------------------------------------------------------------------------------

_designs = st.sampled_from(
    [
        ("superiority", "two-sided"),
        ("superiority", "greater"),
        ("superiority", "less"),
        ("non-inferiority", "greater"),
        ("non-inferiority", "less"),
        ("equivalence", "two-sided"),
    ]
)


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    p_c=st.floats(0.02, 0.98),
    d=st.floats(-0.3, 0.3),
    margin=st.floats(0.02, 0.2),
    design_alt=_designs,
    method=st.sampled_from(["z-pooled", "z-unpooled"]),
    cc=st.booleans(),
    r=st.sampled_from([0.5, 1.0, 1.5, 2.0, 3.0]),
    power=st.floats(0.5, 0.95),
    alpha=st.sampled_from([0.01, 0.05, 0.1]),
)
def test_size_round_trip(p_c, d, margin, design_alt, method, cc, r, power, alpha):
    design, alt = design_alt
    kw = dict(design=design, alternative=alt, method=method, continuity_correction=cc, alpha=alpha)
    if design != "superiority":
        kw["margin"] = margin
    if design == "equivalence":
        d = d * margin / 0.3 * 0.9  # keep |d| < margin
    p_t = p_c + d
    if not 0.01 < p_t < 0.99:
        reject()
    try:
        res = plan(p_c, expected_rate=p_t, power=power, allocation_ratio=r, **kw)
    except ValueError:
        reject()
    assert res.power >= power
    assert res.n_treatment == math.ceil(r * res.n_control)
    assert res.n_total == res.n_control + res.n_treatment
    again = plan(p_c, expected_rate=p_t, solve_for="power", n_control=res.n_control,
                 n_treatment=res.n_treatment, **kw)
    assert again.power == res.power
    assert again.target_power is None
    if alt != "two-sided" and res.n_control > 1:
        prev = res.n_control - 1
        fewer = plan(p_c, expected_rate=p_t, solve_for="power", n_control=prev,
                     n_treatment=math.ceil(r * prev), **kw)
        assert fewer.power < power


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    p_c=st.floats(0.02, 0.98),
    n_c=st.integers(30, 1_000_000),
    ratio=st.floats(0.25, 4.0),
    margin=st.floats(0.02, 0.2),
    design_alt=_designs,
    method=st.sampled_from(["z-pooled", "z-unpooled"]),
    cc=st.booleans(),
    power=st.floats(0.5, 0.95),
)
def test_effect_round_trip(p_c, n_c, ratio, margin, design_alt, method, cc, power):
    design, alt = design_alt
    n_t = max(1, round(n_c * ratio))
    kw = dict(design=design, alternative=alt, method=method, continuity_correction=cc)
    if design != "superiority":
        kw["margin"] = margin
    try:
        eff = plan(p_c, solve_for="effect", n_control=n_c, n_treatment=n_t, power=power, **kw)
    except ValueError:
        reject()
    assert eff.power >= power
    assert 0.0 < eff.expected_rate < 1.0
    if design == "superiority":
        assert eff.absolute_effect > 0 if alt != "less" else eff.absolute_effect < 0
    try:
        size = plan(p_c, expected_rate=eff.expected_rate, power=power, allocation_ratio=n_t / n_c, **kw)
    except ValueError:
        # Only the "effect at the very edge of (0, 1)" case may be rejected by the size solver.
        assert eff.warnings
        return
    assert size.n_control <= n_c
    assert size.n_treatment <= n_t


def test_effect_is_smallest():
    res = plan(0.10, solve_for="effect", n_control=2000, alternative="greater")
    nearer = plan(0.10, expected_rate=res.expected_rate - 1e-6, solve_for="power", n_control=2000,
                  alternative="greater")
    assert nearer.power < 0.8 <= res.power
    # Bisection to 1e-10 on the rate scale: the power at the reported rate is the target to ~1e-8.
    assert res.power == pytest.approx(0.8, abs=1e-7)


def test_two_sided_effect_reports_rise_and_names_fall():
    res = plan(0.10, solve_for="effect", n_control=2000)
    assert res.absolute_effect > 0 and res.relative_effect > 0
    assert "rise" in res.summary and "fall" in res.summary
    assert res.summary.startswith("With 2,000 trials per group, a two-sided 5% test has 80% power")


def test_continuity_corrected_power_consistent_with_size():
    for r in (1.0, 2.0):
        res = plan(0.12, expected_rate=0.15, continuity_correction=True, allocation_ratio=r, power=0.9)
        back = plan(0.12, expected_rate=0.15, continuity_correction=True, solve_for="power",
                    n_control=res.n_control, n_treatment=res.n_treatment)
        fewer = plan(0.12, expected_rate=0.15, continuity_correction=True, solve_for="power",
                     n_control=res.n_control - 1, n_treatment=math.ceil(r * (res.n_control - 1)))
        # Near-tail power only (two-sided: the far tail adds well under 1e-6 here).
        assert back.power >= 0.9 > fewer.power - 1e-6
        assert back.power == res.power
        no_cc = plan(0.12, expected_rate=0.15, solve_for="power", n_control=res.n_control,
                     n_treatment=res.n_treatment)
        assert no_cc.power > back.power


def test_power_increases_with_size_sweep():
    pts = sweep("n_control", [100, 500, 1000, 5000, 20000], baseline_rate=0.2, expected_rate=0.23,
                solve_for="power")
    powers = [p.power for p in pts]
    assert powers == sorted(powers)
    assert all(p.n_control == n for p, n in zip(pts, [100, 500, 1000, 5000, 20000], strict=True))


def test_sweep_points_equal_single_plans():
    values = [0.11, 0.12, 0.15, 0.2]
    pts = sweep("expected_rate", values, baseline_rate=0.10, power=0.9, allocation_ratio=2.0)
    for v, p in zip(values, pts, strict=True):
        assert p == plan(0.10, expected_rate=v, power=0.9, allocation_ratio=2.0)
    sizes = [p.n_control for p in pts]
    assert sizes == sorted(sizes, reverse=True)
    eff = sweep("n_control", [1000, 4000], baseline_rate=0.3, solve_for="effect")
    assert eff[0].absolute_effect > eff[1].absolute_effect > 0
    assert isinstance(eff[0], PlanResult)


# ----------------------------------------------------------------------------------------------
# Wording, fields, warnings, extremes
# ----------------------------------------------------------------------------------------------


def test_summary_percentages_widen_when_needed():
    res = plan(0.1, expected_rate=0.1004, power=0.5)
    assert "from 10.00% to 10.04%" in res.summary
    assert f"{res.n_control:,}" in res.summary and "," in f"{res.n_control:,}"


def test_unequal_groups_summary_and_fields():
    res = plan(0.10, relative_effect=0.2, allocation_ratio=2.0, alternative="greater", alpha=0.025)
    assert res.expected_rate == pytest.approx(0.12, abs=1e-15)
    assert res.relative_effect == pytest.approx(0.2, abs=1e-12)
    assert res.absolute_effect == pytest.approx(0.02, abs=1e-12)
    assert "trials in control and" in res.summary and "one-sided 2.5% level" in res.summary
    assert res.alternative == "greater" and res.target_power == 0.8 and res.margin is None
    same = plan(0.10, absolute_effect=0.02, allocation_ratio=2.0, alternative="greater", alpha=0.025)
    assert same.n_control == res.n_control


def test_noninferiority_two_sided_is_read_as_greater_with_warning():
    res = plan(0.10, expected_rate=0.10, design="non-inferiority", margin=0.02)
    explicit = plan(0.10, expected_rate=0.10, design="non-inferiority", margin=0.02, alternative="greater")
    assert res.alternative == "greater" and res.n_control == explicit.n_control
    assert any('read as "greater"' in w for w in res.warnings)
    assert explicit.warnings == ()


def test_small_counts_warn_and_extremes_stay_finite():
    res = plan(0.01, expected_rate=0.2)
    assert any("normal approximation" in w for w in res.warnings)
    big = plan(0.5, expected_rate=0.5000001, solve_for="power", n_control=MAX_TRIALS, n_treatment=MAX_TRIALS)
    assert 0.0 < big.power < 1.0 and math.isfinite(big.power)
    tiny = plan(1e-9, expected_rate=2e-9, solve_for="power", n_control=10)
    assert 0.0 <= tiny.power <= 1.0
    eff = plan(0.5, solve_for="effect", n_control=MAX_TRIALS)
    assert 0.0 < eff.absolute_effect < 1e-5


def test_results_beyond_max_trials_raise():
    with pytest.raises(ValueError, match="more than 1,000,000,000,000 trials per group"):
        plan(0.5, expected_rate=0.5 + 1e-8)


# ----------------------------------------------------------------------------------------------
# Bad input: every case a ValueError that names what to change
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        (dict(baseline_rate=0.0, expected_rate=0.1), "baseline_rate must be strictly between 0 and 1"),
        (dict(baseline_rate=1.2, expected_rate=0.1), "baseline_rate"),
        (dict(baseline_rate=float("nan"), expected_rate=0.1), "baseline_rate"),
        (dict(baseline_rate=True, expected_rate=0.1), "baseline_rate"),
        (dict(baseline_rate=0.1, expected_rate=1.0), "expected_rate must be strictly between 0 and 1"),
        (dict(baseline_rate=0.1, absolute_effect=0.95), "absolute_effect"),
        (dict(baseline_rate=0.6, relative_effect=1.0), "relative_effect"),
        (dict(baseline_rate=0.1, expected_rate=0.1), "equal to the baseline"),
        (dict(baseline_rate=0.1, absolute_effect=0.0), "equal to the baseline"),
        (dict(baseline_rate=0.1, expected_rate=0.12, absolute_effect=0.02), "only one of"),
        (dict(baseline_rate=0.1), "exactly one of"),
        (dict(baseline_rate=0.1, expected_rate=0.12, power=1.0), "power must be strictly between"),
        (dict(baseline_rate=0.1, expected_rate=0.12, power=0.0), "power"),
        (dict(baseline_rate=0.1, expected_rate=0.12, power=0.04), "power must be greater than alpha"),
        (dict(baseline_rate=0.1, expected_rate=0.12, alpha=0.6), "alpha"),
        (dict(baseline_rate=0.1, expected_rate=0.12, alpha=0.0), "alpha"),
        (dict(baseline_rate=0.1, expected_rate=0.12, alternative="bigger"),
         'alternative "bigger" not recognized'),
        (dict(baseline_rate=0.1, expected_rate=0.12, design="better"), "design"),
        (dict(baseline_rate=0.1, expected_rate=0.12, method="wald"), "method"),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="n"), "solve_for"),
        (dict(baseline_rate=0.1, expected_rate=0.12, continuity_correction="yes"), "continuity_correction"),
        (dict(baseline_rate=0.1, expected_rate=0.12, allocation_ratio=0.0), "allocation_ratio"),
        (dict(baseline_rate=0.1, expected_rate=0.12, allocation_ratio=float("inf")), "allocation_ratio"),
        (dict(baseline_rate=0.1, expected_rate=0.1, design="non-inferiority"), "needs a margin"),
        (dict(baseline_rate=0.1, expected_rate=0.1, design="equivalence"), "needs a margin"),
        (dict(baseline_rate=0.1, expected_rate=0.1, design="equivalence", margin=-0.1), "margin"),
        (dict(baseline_rate=0.1, expected_rate=0.12, margin=0.02), "margin applies only"),
        (dict(baseline_rate=0.1, expected_rate=0.13, design="equivalence", margin=0.02),
         "equivalence margin 0.02 must exceed the expected difference"),
        (dict(baseline_rate=0.1, expected_rate=0.1, design="equivalence", margin=0.02, alternative="greater"),
         "equivalence"),
        (dict(baseline_rate=0.1, expected_rate=0.07, design="non-inferiority", margin=0.02),
         "beyond the non-inferiority margin"),
        (dict(baseline_rate=0.1, expected_rate=0.08, alternative="greater"), 'alternative is "greater"'),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="power"), "n_control is required"),
        (dict(baseline_rate=0.1, solve_for="effect"), "n_control is required"),
        (dict(baseline_rate=0.1, expected_rate=0.12, n_control=100), "n_control is solved for"),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="power", n_control=0),
         "n_control must be between"),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="power", n_control=10.5), "whole number"),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="power", n_control=10,
              n_treatment=MAX_TRIALS + 1),
         "n_treatment must be between"),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="power", n_control=100, n_treatment=300,
              allocation_ratio=2.0), "disagrees"),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="effect", n_control=100), "solved for"),
        (dict(baseline_rate=0.9, solve_for="effect", n_control=3, alternative="greater"),
         "no treatment rate"),
        (dict(baseline_rate=0.1, solve_for="effect", n_control=10, design="equivalence", margin=0.01),
         "even equal rates"),
        (dict(baseline_rate=0.5, expected_rate=0.5 + 1e-9), "more than 1,000,000,000,000"),
        (dict(baseline_rate=0.1, expected_rate=0.12, solve_for="power", n_control=MAX_TRIALS,
              allocation_ratio=2.0), "treatment trials"),
    ],
)
def test_bad_input_raises_value_error(kwargs, match):
    kwargs = dict(kwargs)
    baseline = kwargs.pop("baseline_rate")
    with pytest.raises(ValueError, match=match):
        plan(baseline, **kwargs)


@pytest.mark.parametrize(
    ("args", "kwargs", "match"),
    [
        (("effect", [0.1]), dict(baseline_rate=0.1), 'vary "effect" not recognized'),
        (("expected_rate", []), dict(baseline_rate=0.1), "1 to 200"),
        (("expected_rate", [0.12] * 201), dict(baseline_rate=0.1), "1 to 200"),
        (("expected_rate", [0.12]), dict(baseline_rate=0.1, expected_rate=0.12), "swept argument"),
        (("expected_rate", [0.12, 0.1]), dict(baseline_rate=0.1), r"values\[1\] \(expected_rate=0.1\)"),
        (("n_control", [100]), dict(baseline_rate=0.1, expected_rate=0.12), "n_control is solved for"),
        (("power", [0.8]), dict(expected_rate=0.12), "baseline_rate"),
        (("alpha", [0.05]), dict(baseline_rate=0.1, expected_rate=0.12, colour=1), "does not take"),
        (("alpha", "0.05"), dict(baseline_rate=0.1, expected_rate=0.12), "list of numbers"),
    ],
)
def test_sweep_bad_input(args, kwargs, match):
    with pytest.raises(ValueError, match=match):
        sweep(*args, **kwargs)
