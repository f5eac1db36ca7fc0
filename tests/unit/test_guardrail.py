"""The guardrail core: verdicts agree with the score test and the Miettinen-Nurminen interval at the margin.

Sources used here:

* The core's own score statistic and Miettinen-Nurminen bounds (``proportio.stats.score`` /
  ``proportio.stats.intervals``), themselves checked in tests/reference/: the property tests show the
  verdict is exactly what those say at the margin, for both directions and both margin types.
* The definition, by hand: the restricted maximum-likelihood rates found by a direct numerical
  maximisation of the binomial likelihood (scipy.optimize.minimize_scalar, shares nothing with the
  closed-form roots), the score statistic (estimate - margin) / sqrt(restricted variance * N/(N-1))
  of Miettinen & Nurminen (1985), Statistics in Medicine 4:213-226 (as written in Farrington &
  Manning 1990, Statistics in Medicine 9:1447-1454; the formula from memory), normal tails from
  scipy.special.ndtr.
* statsmodels 0.15 ``score_test_proportions_2indep`` for the ratio (relative margins); its difference
  cubic is wrong for non-zero nulls (tests/reference/test_score.py says why), so the difference is
  checked by hand only.
* ``proportio.stats.multiplicity.adjust_p_values`` (checked against statsmodels in
  tests/reference/test_multiplicity.py) for the multiplicity-adjusted verdicts.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar
from scipy.special import ndtr, ndtri, xlog1py, xlogy
from statsmodels.stats.proportion import score_test_proportions_2indep

from proportio.stats import guardrail, intervals, planning, score
from proportio.stats.multiplicity import adjust_p_values

HIGHER, LOWER = "higher-is-better", "lower-is-better"


@st.composite
def cases(draw):
    """Counts (treatment, control), margin type, direction, margin and alpha."""
    big = draw(st.booleans())
    top = 10**9 if big else 3000
    nt = draw(st.integers(1, top))
    nc = draw(st.integers(1, top))
    xt = draw(st.integers(0, nt))
    xc = draw(st.integers(0, nc))
    margin_type = draw(st.sampled_from(guardrail.MARGIN_TYPES))
    direction = draw(st.sampled_from(guardrail.DIRECTIONS))
    upper = 0.99 if margin_type == "absolute" or direction == HIGHER else 3.0
    margin = draw(st.floats(1e-4, upper))
    alpha = draw(st.sampled_from((0.01, 0.025, 0.05, 0.1, 0.2)))
    return xt, nt, xc, nc, margin_type, direction, margin, alpha


def margin_scale(margin_type: str, direction: str, margin: float) -> tuple[str, float]:
    """Return (effect, the margin on that effect's scale), by the table of the module docstring."""
    sign = -1.0 if direction == HIGHER else 1.0
    if margin_type == "absolute":
        return "difference", sign * margin
    return "ratio", 1.0 + sign * margin


# ------------------------------------------------------------------------------------ properties


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(cases())
def test_verdict_is_the_score_test_and_the_mn_interval_at_the_margin(case):
    xt, nt, xc, nc, margin_type, direction, margin, alpha = case
    r = guardrail.guardrail(xt, nt, xc, nc, margin=margin, margin_type=margin_type, direction=direction, alpha=alpha)
    effect, null = margin_scale(margin_type, direction, margin)
    x1, n1, x2, n2 = (np.array([float(v)]) for v in (xt, nt, xc, nc))
    z = float(score.score_statistic(x1, n1, x2, n2, null, effect, correction=True)[0])
    crit = float(ndtri(1.0 - alpha))
    # Within rounding of the critical value the test and the bisected bound may legitimately differ.
    assume(abs(abs(z) - crit) > 1e-7 * max(1.0, crit))
    p_up, p_down = float(ndtr(-z)), float(ndtr(z))
    p_ni, p_worse = (p_up, p_down) if direction == HIGHER else (p_down, p_up)

    assert r.test.effect == effect and r.test.null_value == null and r.test.method == "score"
    assert r.test.alternative == ("greater" if direction == HIGHER else "less")
    assert math.isclose(r.test.p_value, p_ni, rel_tol=1e-12, abs_tol=1e-300)
    assert math.isclose(r.test.inferiority_p_value, p_worse, rel_tol=1e-12, abs_tol=1e-300)
    assert math.isclose(r.test.p_value + r.test.inferiority_p_value, 1.0, abs_tol=1e-12)

    # The interval: the two one-sided 1 - alpha Miettinen-Nurminen bounds.
    zz = np.array([crit])
    lo, hi = intervals.effect_bounds(effect, x1, n1, x2, n2, "miettinen-nurminen", zz, zz)
    lo, hi = intervals.finite_or_none(lo[0]), intervals.finite_or_none(hi[0])
    assert r.interval.method == "miettinen-nurminen" and math.isclose(r.interval.confidence, 1 - 2 * alpha)
    assert (r.interval.lower, r.interval.upper) == (lo, hi)

    upper = math.inf if hi is None else hi
    lower = -math.inf if lo is None else lo
    if direction == HIGHER:
        shown_no_worse, shown_worse = lower > null, upper < null
    else:
        shown_no_worse, shown_worse = upper < null, lower > null
    expected = "pass" if shown_no_worse else "fail" if shown_worse else "inconclusive"
    assert r.verdict == expected, (r, z, crit)
    # ... and the same from the test side.
    assert r.verdict == ("pass" if p_ni <= alpha else "fail" if p_worse <= alpha else "inconclusive")

    if r.verdict == "inconclusive":
        extra = r.additional_trials_per_group
        assert (extra is not None and extra >= 1) or any("additional_trials_per_group" in w for w in r.warnings)
    else:
        assert r.additional_trials_per_group is None
    assert r.summary.startswith(r.verdict.capitalize())


@settings(max_examples=30, deadline=None)
@given(st.integers(1, 5000), st.integers(1, 5000), st.data(), st.floats(1e-3, 0.5), st.sampled_from((0.05, 0.1)))
def test_lower_is_better_on_errors_is_higher_is_better_on_successes(nt, nc, data, margin, alpha):
    # An error rate e = 1 - s: "errors no more than m above" is "successes no more than m below".
    et = data.draw(st.integers(0, nt))
    ec = data.draw(st.integers(0, nc))
    errors = guardrail.guardrail(et, nt, ec, nc, margin=margin, direction=LOWER, alpha=alpha)
    successes = guardrail.guardrail(nt - et, nt, nc - ec, nc, margin=margin, direction=HIGHER, alpha=alpha)
    # The closed-form cubic root of the restricted MLE leaves a residue near 1e-15 where a rate is 0,
    # which moves the statistic by up to about 2e-7 relative when the other group is tiny (and a far-tail
    # p-value by z times that), so the statistics are compared, mirrored.
    z_e, z_s = errors.test.statistic, successes.test.statistic
    assert (z_e is None) == (z_s is None)
    if z_e is not None:
        assert math.isclose(z_e, -z_s, rel_tol=1e-6, abs_tol=1e-12)
    if abs(errors.test.p_value - alpha) > 1e-6 and abs(errors.test.inferiority_p_value - alpha) > 1e-6:
        assert errors.verdict == successes.verdict


@settings(max_examples=25, deadline=None)
@given(cases())
def test_a_wider_margin_never_makes_the_verdict_worse(case):
    xt, nt, xc, nc, margin_type, direction, margin, alpha = case
    narrow = guardrail.guardrail(xt, nt, xc, nc, margin=margin / 2, margin_type=margin_type, direction=direction,
                                 alpha=alpha)
    wide = guardrail.guardrail(xt, nt, xc, nc, margin=margin, margin_type=margin_type, direction=direction,
                               alpha=alpha)
    rank = {"fail": 0, "inconclusive": 1, "pass": 2}
    assert rank[wide.verdict] >= rank[narrow.verdict]
    assert wide.test.p_value <= narrow.test.p_value + 1e-12


# ------------------------------------------------------------------------------- by the definition


def restricted_mle(x1, n1, x2, n2, effect: str, value: float) -> tuple[float, float]:
    """Maximise the binomial likelihood under p1 - p2 = value or p1 / p2 = value, numerically."""
    if effect == "difference":
        lo, hi = max(0.0, -value), min(1.0, 1.0 - value)

        def p1_of(p2):
            return p2 + value
    else:
        lo, hi = 0.0, min(1.0, 1.0 / value)

        def p1_of(p2):
            return value * p2

    def nll(p2):
        p1 = p1_of(p2)
        return -float(xlogy(x1, p1) + xlog1py(n1 - x1, -p1) + xlogy(x2, p2) + xlog1py(n2 - x2, -p2))

    best = minimize_scalar(nll, bounds=(lo, hi), method="bounded", options={"xatol": 1e-14}).x
    width = 1e-6 * (hi - lo)
    best = minimize_scalar(nll, bounds=(max(lo, best - width), min(hi, best + width)), method="bounded",
                           options={"xatol": 1e-16}).x
    return p1_of(best), best


def verdict_by_hand(xt, nt, xc, nc, margin, margin_type, direction, alpha):
    effect, null = margin_scale(margin_type, direction, margin)
    q1, q2 = restricted_mle(xt, nt, xc, nc, effect, null)
    factor = (nt + nc) / (nt + nc - 1.0)
    if effect == "difference":
        z = (xt / nt - xc / nc - null) / math.sqrt((q1 * (1 - q1) / nt + q2 * (1 - q2) / nc) * factor)
    else:
        z = (xt / nt - null * xc / nc) / math.sqrt((q1 * (1 - q1) / nt + null**2 * q2 * (1 - q2) / nc) * factor)
    p_ni = float(ndtr(-z)) if direction == HIGHER else float(ndtr(z))
    p_worse = 1.0 - p_ni
    verdict = "pass" if p_ni <= alpha else "fail" if p_worse <= alpha else "inconclusive"
    return verdict, z, p_ni


HAND_CASES = [
    # (xt, nt, xc, nc, margin, margin_type, direction, alpha) -- invented numbers covering every verdict
    (471, 9598, 412, 9630, 0.005, "absolute", HIGHER, 0.05),     # checkout completion: pass
    (320, 9598, 412, 9630, 0.002, "absolute", HIGHER, 0.05),     # completion drops: fail
    (405, 9598, 412, 9630, 0.003, "absolute", HIGHER, 0.05),     # inconclusive
    (58, 9598, 61, 9630, 0.5, "relative", LOWER, 0.05),          # order errors: pass
    (150, 10000, 100, 10000, 0.1, "relative", LOWER, 0.05),      # error rate up 50 %: fail
    (105, 10000, 100, 10000, 0.1, "relative", LOWER, 0.05),      # inconclusive
    (12, 400, 9, 380, 0.02, "absolute", LOWER, 0.1),             # crash rate, small groups
    (190, 200, 188, 200, 0.15, "relative", HIGHER, 0.025),       # a success rate near 1: pass
]


@pytest.mark.parametrize("case", HAND_CASES)
def test_verdict_and_p_value_by_the_definition(case):
    xt, nt, xc, nc, margin, margin_type, direction, alpha = case
    r = guardrail.guardrail(xt, nt, xc, nc, margin=margin, margin_type=margin_type, direction=direction, alpha=alpha)
    verdict, z, p_ni = verdict_by_hand(*case)
    assert r.verdict == verdict
    assert r.test.statistic == pytest.approx(z, rel=1e-6)       # numerical MLE: optimiser tolerance
    assert r.test.p_value == pytest.approx(p_ni, rel=1e-6, abs=1e-12)


def test_every_verdict_occurs_in_the_hand_cases():
    assert {verdict_by_hand(*c)[0] for c in HAND_CASES} == {"pass", "fail", "inconclusive"}


@pytest.mark.parametrize("case", [c for c in HAND_CASES if c[5] == "relative"])
def test_relative_margins_agree_with_statsmodels(case):
    xt, nt, xc, nc, margin, margin_type, direction, alpha = case
    r = guardrail.guardrail(xt, nt, xc, nc, margin=margin, margin_type=margin_type, direction=direction, alpha=alpha)
    _, null = margin_scale(margin_type, direction, margin)
    # statsmodels 0.15 score_test_proportions_2indep, compare="ratio", correction=True (Miettinen-Nurminen)
    res = score_test_proportions_2indep(xt, nt, xc, nc, value=null, compare="ratio",
                                        alternative="larger" if direction == HIGHER else "smaller", correction=True)
    assert r.test.statistic == pytest.approx(res.statistic, rel=1e-9)
    assert r.test.p_value == pytest.approx(res.pvalue, rel=1e-9)


# ----------------------------------------------------------------------------- additional trials


@pytest.mark.parametrize("case", [(405, 9598, 412, 9630, 0.003, "absolute", HIGHER),
                                  (105, 10000, 100, 10000, 0.1, "relative", LOWER),
                                  (30, 1000, 31, 1500, 0.01, "absolute", LOWER)])
def test_additional_trials_settle_it_when_the_rates_hold(case):
    xt, nt, xc, nc, margin, margin_type, direction = case
    r = guardrail.guardrail(xt, nt, xc, nc, margin=margin, margin_type=margin_type, direction=direction)
    assert r.verdict == "inconclusive"
    # The plan, written out: observed rates, same margin (relative -> margin * control rate), alpha, power 0.8,
    # the current split; the answer is the larger shortfall.
    plan = planning.plan(xc / nc, expected_rate=xt / nt, alpha=0.05, power=0.8, design="non-inferiority",
                         margin=margin if margin_type == "absolute" else margin * xc / nc,
                         alternative="greater" if direction == HIGHER else "less", allocation_ratio=nt / nc)
    extra = r.additional_trials_per_group
    assert extra == max(plan.n_control - nc, plan.n_treatment - nt)
    # With the observed rates unchanged at the planned sizes, the data now show non-inferiority.
    settled = guardrail.guardrail(round(xt / nt * plan.n_treatment), plan.n_treatment, round(xc / nc * plan.n_control),
                                  plan.n_control, margin=margin, margin_type=margin_type, direction=direction)
    assert settled.verdict == "pass"


def test_no_additional_trials_when_the_estimate_is_beyond_the_margin():
    # Treatment completion 0.4 points below control, margin 0.3 points, not yet significant.
    r = guardrail.guardrail(200, 5000, 220, 5000, margin=0.003)
    assert r.verdict == "inconclusive" and r.additional_trials_per_group is None
    assert any("beyond the margin" in w for w in r.warnings)


def test_zero_rates_are_planned_with_half_a_success_and_say_so():
    r = guardrail.guardrail(0, 100, 0, 100, margin=0.01, direction=LOWER)
    assert r.verdict == "inconclusive" and r.additional_trials_per_group >= 1
    assert any("0% or 100%" in w for w in r.warnings)


def test_unreachable_plans_are_null_with_a_warning():
    r = guardrail.guardrail(10**11, 10**12, 10**11, 10**12, margin=1e-7)
    assert r.verdict == "inconclusive" and r.additional_trials_per_group is None
    assert any("could not be computed" in w for w in r.warnings)


# -------------------------------------------------------------------------------- edges and errors


@pytest.mark.parametrize("counts", [(0, 1, 0, 1), (1, 1, 1, 1), (0, 1, 1, 1), (1, 1, 0, 1), (0, 10**12, 0, 10**12),
                                    (10**12, 10**12, 10**12, 10**12), (3, 10**12, 0, 7)])
@pytest.mark.parametrize(("margin_type", "direction"), [("absolute", HIGHER), ("absolute", LOWER),
                                                        ("relative", HIGHER), ("relative", LOWER)])
def test_edge_counts_never_give_nan(counts, margin_type, direction):
    r = guardrail.guardrail(*counts, margin=0.1, margin_type=margin_type, direction=direction)
    assert r.verdict in guardrail.VERDICTS
    for v in (r.test.statistic, r.test.p_value, r.test.inferiority_p_value, r.interval.lower, r.interval.upper):
        assert v is None or math.isfinite(v)
    assert 0.0 <= r.test.p_value <= 1.0


@pytest.mark.parametrize(("kwargs", "word"), [
    ({"margin": 0.0}, "margin"), ({"margin": -0.1}, "margin"), ({"margin": 1.0}, "margin"),
    ({"margin": float("nan")}, "margin"), ({"margin": True}, "margin"),
    ({"margin": 1.0, "margin_type": "relative"}, "margin"),
    ({"margin": 0.1, "margin_type": "percent"}, "margin_type"), ({"margin": 0.1, "direction": "up"}, "direction"),
    ({"margin": 0.1, "alpha": 0.6}, "alpha"),
])
def test_bad_options_raise_naming_the_argument(kwargs, word):
    with pytest.raises(ValueError, match=word):
        guardrail.guardrail(5, 10, 5, 10, **kwargs)


def test_a_large_relative_margin_is_fine_when_lower_is_better():
    assert guardrail.guardrail(5, 100, 5, 100, margin=2.0, margin_type="relative", direction=LOWER).verdict == "pass"


def test_counts_are_checked():
    with pytest.raises(ValueError, match="treatment.successes must not exceed"):
        guardrail.guardrail(11, 10, 5, 10, margin=0.1)


# ------------------------------------------------------------------------------------ several metrics


def test_adjusted_verdicts_use_adjusted_p_values_of_both_tails():
    p = [0.001, 0.02, 0.6, 0.9991, 0.03]
    q = [1 - v for v in p]
    fam = guardrail.adjust_verdicts(p, q, alpha=0.05, adjustment="holm")
    adj_p, adj_q = adjust_p_values(p, "holm"), adjust_p_values(q, "holm")
    assert fam.adjusted_p_values == tuple(adj_p) and fam.adjusted_inferiority_p_values == tuple(adj_q)
    assert fam.verdicts == tuple(guardrail.verdict_from_p_values(a, b, 0.05) for a, b in zip(adj_p, adj_q, strict=True))
    # Holm over 5: 0.001 * 5 passes; 0.02 * 4 = 0.08 does not; 0.0009 * 5 (the opposite tail) fails.
    assert fam.verdicts == ("pass", "inconclusive", "inconclusive", "fail", "inconclusive")
    unadjusted = guardrail.adjust_verdicts(p, q, alpha=0.05, adjustment="none")
    assert unadjusted.verdicts == ("pass", "pass", "inconclusive", "fail", "pass")
    assert fam.planning_alpha == 0.05 / 5 and unadjusted.planning_alpha == 0.05


def test_planning_alpha_of_benjamini_yekutieli_is_the_strictest_step():
    assert guardrail.planning_alpha(0.05, 3, "benjamini-yekutieli") == pytest.approx(0.05 / (3 * (1 + 1 / 2 + 1 / 3)))
    with pytest.raises(ValueError, match="adjustment"):
        guardrail.adjust_verdicts([0.1], [0.9], adjustment="sidak")


def test_both_tails_rejecting_at_alpha_one_half_is_inconclusive():
    assert guardrail.verdict_from_p_values(0.5, 0.5, 0.5) == "inconclusive"


def test_small_expected_counts_do_not_recommend_an_exact_test_the_guardrail_cannot_run():
    # 3/40 vs 2/38 at a margin of 0.05: expected counts under the margin null are below 5. The two-group
    # test's caution says "an exact test is safer", but the exact tests here test no effect only.
    result = guardrail.guardrail(3, 40, 2, 38, margin=0.05, margin_type="absolute", direction="lower-is-better")
    small = [w for w in result.warnings if w.startswith("the smallest expected count under the null")]
    assert len(small) == 1
    assert "exact test is safer" not in small[0]
    assert small[0].endswith(guardrail.SMALL_COUNT_ADVICE)
    # A large table carries no such caution.
    assert not any("smallest expected count" in w for w in guardrail.guardrail(
        300, 4000, 280, 3800, margin=0.01, margin_type="absolute", direction="lower-is-better").warnings)
