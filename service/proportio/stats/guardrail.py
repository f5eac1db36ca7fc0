"""Guardrail verdicts: is a treatment no worse than its control by more than an allowed margin?

A CI job that changes a pipeline, a checkout or a crash-prone component needs one of three answers
about a rate it must not damage:

pass
    The treatment is shown to be no worse than the control by more than the margin: the
    non-inferiority score test rejects its null hypothesis ("worse by the margin or more") at
    ``alpha``. Equivalently, the one-sided ``1 - alpha`` Miettinen–Nurminen bound on the good side
    of the estimate lies strictly inside the margin.
fail
    The treatment is shown to be worse than the control by more than the margin: the opposite
    one-sided score test (null "worse by at most the margin") rejects at ``alpha``. Equivalently,
    the whole ``1 - 2 alpha`` interval lies beyond the margin.
inconclusive
    Neither; :func:`guardrail` then estimates how many more trials per group would likely settle
    the question (:func:`proportio.stats.planning.plan`, non-inferiority design, power 0.8, the
    observed rates as the planning assumption).

Both one-sided tests are the Miettinen–Nurminen score test at the margin (the statistic is the same,
only the tail differs), so they never both reject for ``alpha < 0.5``; at ``alpha = 0.5`` they both
reject when the statistic is exactly 0, and that tie is reported as inconclusive.

Margins and directions
----------------------
``margin_type="absolute"`` puts the margin on the difference ``d = p_t - p_c`` (0.005 = half a
percentage point); ``"relative"`` puts it on the ratio ``r = p_t / p_c`` (0.1 = 10 %).
``direction="higher-is-better"`` (a success rate) reads "worse" as lower, ``"lower-is-better"`` (an
error or crash rate) as higher:

=================  ==========================  ==================================
direction          absolute: H1 of the test    relative: H1 of the test
=================  ==========================  ==================================
higher-is-better   d > -margin ("greater")     r > 1 - margin ("greater")
lower-is-better    d < +margin ("less")        r < 1 + margin ("less")
=================  ==========================  ==================================

References
----------
Farrington CP, Manning G (1990). Test statistics and sample size formulae for comparative binomial
    trials with null hypothesis of non-zero risk difference or non-unity relative risk. Statistics
    in Medicine 9:1447-1454.
Miettinen O, Nurminen M (1985). Comparative analysis of two rates. Statistics in Medicine 4:213-226.
Holm S (1979). A simple sequentially rejective multiple test procedure. Scandinavian Journal of
    Statistics 6:65-70.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import planning, twogroup
from ._common import check_alpha, check_method, significant_digits
from .multiplicity import ADJUSTMENTS, adjust_p_values

__all__ = [
    "DIRECTIONS",
    "MARGIN_TYPES",
    "PLANNING_POWER",
    "VERDICTS",
    "FamilyVerdicts",
    "GuardrailInterval",
    "GuardrailResult",
    "GuardrailTest",
    "additional_trials",
    "adjust_verdicts",
    "check_margin",
    "guardrail",
    "planning_alpha",
    "verdict_from_p_values",
]

MARGIN_TYPES = ("absolute", "relative")
DIRECTIONS = ("higher-is-better", "lower-is-better")
VERDICTS = ("pass", "fail", "inconclusive")
PLANNING_POWER = 0.8
# What the small-expected-count caution advises here: the exact tests of this service test no effect only,
# so none can test a margin.
SMALL_COUNT_ADVICE = ("no exact test of a margin is available, so treat the verdict with caution and gather more "
                      "trials")


@dataclass(frozen=True, slots=True)
class GuardrailTest:
    """The non-inferiority score test at the margin and its opposite one-sided test.

    ``statistic`` is the Miettinen–Nurminen score statistic at ``null_value`` (positive when the
    data lie above it); ``p_value`` belongs to the non-inferiority test (H1: ``alternative``),
    ``inferiority_p_value`` to the opposite tail (H1: worse than the margin).
    """

    statistic: float | None
    p_value: float
    inferiority_p_value: float
    null_value: float
    alternative: str
    effect: str
    method: str


@dataclass(frozen=True, slots=True)
class GuardrailInterval:
    """The ``1 - 2 alpha`` Miettinen–Nurminen interval: its ends are the two one-sided ``1 - alpha`` bounds."""

    method: str
    effect: str
    confidence: float
    lower: float | None
    upper: float | None


@dataclass(frozen=True, slots=True)
class GuardrailResult:
    """The verdict on one guarded metric."""

    verdict: str
    test: GuardrailTest
    interval: GuardrailInterval
    estimate: twogroup.Estimate
    margin: float
    margin_type: str
    direction: str
    alpha: float
    additional_trials_per_group: int | None
    metric: str | None
    summary: str
    warnings: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class FamilyVerdicts:
    """Verdicts of several metrics gated together, from multiplicity-adjusted p-values."""

    verdicts: tuple[str, ...]
    adjusted_p_values: tuple[float, ...]
    adjusted_inferiority_p_values: tuple[float, ...]
    adjustment: str
    alpha: float
    planning_alpha: float


# ------------------------------------------------------------------------------------------------
# Options


def check_margin(margin: float, margin_type: str = "absolute", direction: str = "higher-is-better") -> float:
    """Return ``margin`` as a float after checking it against the margin type and direction.

    An absolute margin is a difference of rates in (0, 1). A relative margin is a fraction of the
    control rate: in (0, 1) when higher is better (the ratio bound ``1 - margin`` must stay
    positive), any positive number when lower is better (``1 + margin``).
    """
    check_method(margin_type, MARGIN_TYPES, "margin_type")
    check_method(direction, DIRECTIONS, "direction")
    if isinstance(margin, bool) or not isinstance(margin, int | float | np.integer | np.floating):
        raise ValueError("margin must be a number")
    m = float(margin)
    if not math.isfinite(m) or m <= 0.0:
        raise ValueError(f"margin must be a positive finite number, got {margin!r}")
    if margin_type == "absolute" and m >= 1.0:
        raise ValueError(f"an absolute margin is a difference of rates and must be below 1, got {m:g}")
    if margin_type == "relative" and m > 1e5:
        raise ValueError(f"a relative margin above 1e5 (a ratio beyond 10^5) cannot be told from no bound, got {m:g}")
    if margin_type == "relative" and direction == "higher-is-better" and m >= 1.0:
        raise ValueError(
            f"a relative margin when higher is better must be below 1 (a ratio bound of 1 - margin), got {m:g}"
        )
    return m


def _test_setup(margin: float, margin_type: str, direction: str) -> tuple[str, float, str, str]:
    """Return (effect, null value, non-inferiority alternative, opposite alternative)."""
    higher = direction == "higher-is-better"
    if margin_type == "absolute":
        effect, null = "difference", (-margin if higher else margin)
    else:
        effect, null = "ratio", (1.0 - margin if higher else 1.0 + margin)
    return (effect, null, "greater", "less") if higher else (effect, null, "less", "greater")


def verdict_from_p_values(p_value: float, inferiority_p_value: float, alpha: float) -> str:
    """Return the verdict of the two one-sided tests at ``alpha``.

    ``pass`` when only the non-inferiority test rejects, ``fail`` when only the opposite test
    rejects, ``inconclusive`` otherwise (neither, or both at once, which needs ``alpha = 0.5`` and a
    statistic of exactly 0).
    """
    ni = p_value <= alpha
    worse = inferiority_p_value <= alpha
    if ni and not worse:
        return "pass"
    if worse and not ni:
        return "fail"
    return "inconclusive"


# ------------------------------------------------------------------------------------------------
# The verdict


def guardrail(
    treatment_successes: int,
    treatment_trials: int,
    control_successes: int,
    control_trials: int,
    *,
    margin: float,
    margin_type: str = "absolute",
    direction: str = "higher-is-better",
    alpha: float = 0.05,
    metric: str | None = None,
) -> GuardrailResult:
    """Decide whether the treatment is no worse than the control by more than ``margin``.

    Parameters
    ----------
    treatment_successes, treatment_trials, control_successes, control_trials : int
        Counts, ``0 <= successes <= trials``, ``1 <= trials <= 10**12``.
    margin : float
        The largest tolerated deterioration: a difference of rates (``margin_type="absolute"``)
        or a fraction of the control rate (``"relative"``); see :func:`check_margin`.
    margin_type : {"absolute", "relative"}
        Margin on the difference ``p_t - p_c`` or on the ratio ``p_t / p_c``.
    direction : {"higher-is-better", "lower-is-better"}
        Whether a higher rate (successes) or a lower rate (errors, crashes) is the good outcome.
    alpha : float
        Level of each one-sided test, in (0, 0.5].
    metric : str, optional
        A name for the summary sentence.

    Returns
    -------
    GuardrailResult
        The verdict, both one-sided score tests, the ``1 - 2 alpha`` Miettinen–Nurminen interval
        whose ends are the one-sided ``1 - alpha`` bounds, the estimates, the echoed options, the
        extra trials per group that would likely settle an inconclusive verdict (``None`` otherwise
        or when it cannot be computed, with a warning saying why), a summary and warnings.

    Notes
    -----
    ``pass`` holds exactly when the non-inferiority test rejects, which for the score test and the
    interval that inverts it is when the good-side bound lies strictly inside the margin; ``fail``
    exactly when the opposite test rejects, i.e. the other bound lies beyond the margin.

    References
    ----------
    Farrington CP, Manning G (1990). Statistics in Medicine 9:1447-1454.
    Miettinen O, Nurminen M (1985). Statistics in Medicine 4:213-226.
    """
    m = check_margin(margin, margin_type, direction)
    alpha = check_alpha(alpha)
    effect, null, alt_ni, alt_worse = _test_setup(m, margin_type, direction)
    counts = ([treatment_successes], [treatment_trials], [control_successes], [control_trials])
    ni = twogroup.compare(*counts, method="score", alternative=alt_ni, null_value=null, effect=effect, alpha=alpha)[0]
    worse = twogroup.compare(*counts, method="score", alternative=alt_worse, null_value=null, effect=effect,
                             alpha=alpha)[0]
    # The score statistic never becomes NaN (a zero variance gives 0 or +-inf), so both p-values exist.
    assert ni.p_value is not None and worse.p_value is not None
    verdict = verdict_from_p_values(ni.p_value, worse.p_value, alpha)

    if alt_ni == "greater":
        lower, upper = ni.interval.lower, worse.interval.upper
    else:
        lower, upper = worse.interval.lower, ni.interval.upper
    interval = GuardrailInterval("miettinen-nurminen", effect, 1.0 - 2.0 * alpha, lower, upper)
    test = GuardrailTest(ni.statistic, ni.p_value, worse.p_value, null, alt_ni, effect, "score")

    # The test's caution about small expected counts recommends an exact test, which a margin other than no
    # effect does not have here: say what to do instead.
    small = twogroup.small_count_note(ni.assumptions.min_expected_count)
    warnings = [twogroup.small_count_note(ni.assumptions.min_expected_count, SMALL_COUNT_ADVICE) if w == small else w
                for w in dict.fromkeys(ni.warnings + worse.warnings)]
    extra = None
    if verdict == "inconclusive":
        extra, notes = additional_trials(treatment_successes, treatment_trials, control_successes, control_trials,
                                         margin=m, margin_type=margin_type, direction=direction, alpha=alpha)
        warnings.extend(notes)
    result = GuardrailResult(
        verdict=verdict, test=test, interval=interval, estimate=ni.estimate, margin=m, margin_type=margin_type,
        direction=direction, alpha=alpha, additional_trials_per_group=extra, metric=metric, summary="",
        warnings=tuple(warnings),
    )
    return _with_summary(result)


# ------------------------------------------------------------------------------------------------
# Planning more trials


def _planning_rate(successes: int, trials: int) -> tuple[float, bool]:
    """Return the rate to plan with and whether it was moved off 0 or 1 (to 0.5/n or 1 - 0.5/n)."""
    if successes == 0:
        return 0.5 / trials, True
    if successes == trials:
        return 1.0 - 0.5 / trials, True
    return successes / trials, False


def additional_trials(
    treatment_successes: int,
    treatment_trials: int,
    control_successes: int,
    control_trials: int,
    *,
    margin: float,
    margin_type: str = "absolute",
    direction: str = "higher-is-better",
    alpha: float = 0.05,
    power: float = PLANNING_POWER,
) -> tuple[int | None, list[str]]:
    """Estimate how many more trials per group would likely show non-inferiority.

    The observed rates are taken as the truth and :func:`proportio.stats.planning.plan` solves the
    non-inferiority design (same margin, direction and ``alpha``, the given ``power``, the pooled
    restricted-MLE variance of Farrington & Manning, the current split of trials between the groups)
    for the group sizes; the answer is the larger of the two groups' shortfalls, so adding that many
    trials to each group (or continuing with the current split until both reach the planned sizes)
    is enough by the plan.

    Returns
    -------
    (int or None, list of str)
        The number of additional trials per group (at least 1), or ``None`` with a note saying why
        it cannot be computed: the observed effect is at or beyond the margin (more data would then
        more likely show the treatment worse), or the plan needs more than 10**12 trials.

    Notes
    -----
    The planner works on the difference scale; a relative margin is converted to the difference
    ``margin * p_c`` at the observed control rate (exact for the hypotheses, approximate for the
    variance). Observed rates of exactly 0 or 1 cannot be planned with and are moved to ``0.5/n``
    or ``1 - 0.5/n`` (common practice, no published source); a note says so.
    """
    notes: list[str] = []
    m = check_margin(margin, margin_type, direction)
    higher = direction == "higher-is-better"
    p_t = treatment_successes / treatment_trials
    p_c = control_successes / control_trials
    d = p_t - p_c
    if margin_type == "absolute":
        beyond = d <= -m if higher else d >= m
    elif control_successes == 0:
        beyond = treatment_successes > 0 and not higher
    else:
        ratio = p_t / p_c
        beyond = ratio <= 1.0 - m if higher else ratio >= 1.0 + m
    if beyond:
        notes.append(
            "additional_trials_per_group is null: the observed effect is at or beyond the margin, so more trials "
            "are unlikely to show the treatment no worse (they would more likely show it worse)"
        )
        return None, notes

    plan_t, moved_t = _planning_rate(treatment_successes, treatment_trials)
    plan_c, moved_c = _planning_rate(control_successes, control_trials)
    if moved_t or moved_c:
        which = "treatment and control rates are" if moved_t and moved_c else (
            "treatment rate is" if moved_t else "control rate is")
        notes.append(
            f"the {which} 0% or 100%, which cannot be planned with; additional_trials_per_group "
            "assumes half a success (or half a failure) instead"
        )
    plan_margin = m if margin_type == "absolute" else m * plan_c
    if margin_type == "relative":
        notes.append(
            "additional_trials_per_group is planned on the difference scale: the relative margin is taken as "
            f"{100.0 * plan_margin:.4g} percentage points at the observed control rate"
        )
    try:
        planned = planning.plan(
            plan_c, expected_rate=plan_t, alpha=alpha, power=power, alternative="greater" if higher else "less",
            allocation_ratio=treatment_trials / control_trials, design="non-inferiority", margin=plan_margin,
            method="z-pooled",
        )
    except ValueError as exc:
        notes.append(f"additional_trials_per_group could not be computed: {exc}")
        return None, notes
    shortfall = max(planned.n_control - control_trials, planned.n_treatment - treatment_trials)
    # The plan's variance lacks the N/(N-1) factor of the test; just short of the critical value the two
    # can disagree by a trial or so. At least one more trial is always needed to change the verdict.
    return max(int(shortfall), 1), notes


# ------------------------------------------------------------------------------------------------
# Several metrics at once


def planning_alpha(alpha: float, m: int, adjustment: str) -> float:
    """Return the per-metric level at which to plan more trials under a multiplicity adjustment.

    The strictest level any step of the adjustment can apply: ``alpha / m`` for Bonferroni, Holm,
    Hochberg and Benjamini-Hochberg, ``alpha / (m * H_m)`` for Benjamini-Yekutieli, ``alpha``
    without adjustment. Planning at it is enough whatever the other metrics show.
    """
    check_method(adjustment, ADJUSTMENTS, "adjustment")
    if adjustment == "none" or m <= 1:
        return alpha
    if adjustment == "benjamini-yekutieli":
        return alpha / (m * sum(1.0 / j for j in range(1, m + 1)))
    return alpha / m


def adjust_verdicts(p_values, inferiority_p_values, alpha: float = 0.05, adjustment: str = "holm") -> FamilyVerdicts:
    """Give the verdicts of several guarded metrics from multiplicity-adjusted p-values.

    The non-inferiority p-values of all metrics are adjusted together (one family: the claims "no
    worse than the margin"), and so are the opposite-tail p-values (the claims "worse than the
    margin"), each with :func:`proportio.stats.multiplicity.adjust_p_values`. A metric passes when
    its adjusted non-inferiority p-value is at most ``alpha``, fails when its adjusted opposite
    p-value is, and is inconclusive otherwise (:func:`verdict_from_p_values`). With a family-wise
    adjustment (Bonferroni, Holm, Hochberg) the chance that any metric passes wrongly is at most
    ``alpha``, and so is the chance that any fails wrongly.

    Parameters
    ----------
    p_values, inferiority_p_values : sequence of float
        The two one-sided p-values of each metric (``GuardrailTest.p_value`` and
        ``GuardrailTest.inferiority_p_value``), in the same order.
    alpha : float
        Family-wise (or false-discovery) level, in (0, 0.5].
    adjustment : str
        One of :data:`proportio.stats.multiplicity.ADJUSTMENTS`; ``"holm"`` by default.
    """
    alpha = check_alpha(alpha)
    check_method(adjustment, ADJUSTMENTS, "adjustment")
    p = np.asarray(p_values, dtype=np.float64)
    q = np.asarray(inferiority_p_values, dtype=np.float64)
    if p.ndim != 1 or p.shape != q.shape or p.size == 0:
        raise ValueError("p_values and inferiority_p_values must be non-empty lists of the same length")
    adj_p = adjust_p_values(p, adjustment)
    adj_q = adjust_p_values(q, adjustment)
    verdicts = tuple(verdict_from_p_values(float(a), float(b), alpha) for a, b in zip(adj_p, adj_q, strict=True))
    return FamilyVerdicts(verdicts, tuple(float(v) for v in adj_p), tuple(float(v) for v in adj_q), adjustment,
                          alpha, planning_alpha(alpha, int(p.size), adjustment))


# ------------------------------------------------------------------------------------------------
# Wording


def _pct(x: float) -> str:
    """Format a rate as a percentage: two decimals, more significant digits when it is that small."""
    if x == 0.0 or x >= 0.0001:
        return f"{100.0 * x:.2f}%"
    return f"{significant_digits(100.0 * x)}%"


def _margin_text(r: GuardrailResult) -> str:
    worse = "below" if r.direction == "higher-is-better" else "above"
    if r.margin_type == "absolute":
        return f"{100.0 * r.margin:.6g} percentage points {worse}"
    return f"{100.0 * r.margin:.6g}% {worse}"


def _bound(effect: str, v: float | None) -> str:
    if v is None:
        return "unbounded"
    if effect == "difference":
        return f"{100.0 * v:+.3g}"
    return significant_digits(v)


def _p_text(p: float) -> str:
    if p >= 0.001:
        return f"{p:.3g}"
    return f"{p:.2e}" if p > 0 else "below 1e-300"


def _with_summary(r: GuardrailResult) -> GuardrailResult:
    e = r.estimate
    name = f" ({r.metric})" if r.metric else ""
    rates = f"the treatment rate {_pct(e.treatment_rate)}"
    control = f"the control rate {_pct(e.control_rate)}"
    margin = _margin_text(r)
    level = f"{round(100.0 * r.interval.confidence, 10):g}%"
    unit = " percentage points" if r.test.effect == "difference" else ""
    where = (f"{level} interval for the {r.test.effect} {_bound(r.test.effect, r.interval.lower)} to "
             f"{_bound(r.test.effect, r.interval.upper)}{unit}")
    if r.verdict == "pass":
        text = (f"Pass{name}: {rates} is shown to be no more than {margin} {control} (one-sided score test "
                f"p = {_p_text(r.test.p_value)}; {where}).")
    elif r.verdict == "fail":
        text = (f"Fail{name}: {rates} is shown to be more than {margin} {control} (one-sided score test "
                f"p = {_p_text(r.test.inferiority_p_value)}; {where}).")
    else:
        more = ""
        if r.additional_trials_per_group is not None:
            more = f"; about {r.additional_trials_per_group:,} more trials per group would likely settle it"
        text = (f"Inconclusive{name}: the data show neither that {rates} is no more than {margin} {control} nor "
                f"that it is more ({where}){more}.")
    return GuardrailResult(**{**{f: getattr(r, f) for f in GuardrailResult.__slots__}, "summary": text})
