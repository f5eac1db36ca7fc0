"""Hypothesis tests comparing the success rates of a treatment and a control group.

:func:`compare` is vectorised: it takes arrays of counts and one set of options and returns one
:class:`TestResult` per comparison. A single comparison is a batch of one, so a batch and a single
call can never disagree.

Methods
-------
z-pooled
    Normal test of no difference with the variance pooled under the null (equal to the
    Farrington–Manning score test at a difference of 0); optional continuity correction.
z-unpooled
    Wald test of ``p_t - p_c = null_value`` with the unpooled variance; optional continuity correction.
score
    Miettinen–Nurminen score test of any null difference, ratio or odds ratio. The variance carries
    the ``N / (N - 1)`` factor of Miettinen & Nurminen (1985), which makes it unbiased under the null
    and makes the test consistent with the ``miettinen-nurminen`` interval it is reported with.
chi-square
    Pearson's chi-square test of the 2x2 table (two-sided only), Yates-corrected on request.
fisher-exact, boschloo-exact, barnard-exact
    Exact tests of no difference for small samples (see :mod:`proportio.stats.exact`).
auto
    The pooled z-test when every expected count under the null is at least 5 (common practice, no
    published source), else Boschloo's exact test (Fisher's where the table is too large for it).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import exact, score
from ._common import (
    as_counts,
    check_alpha,
    check_alternative,
    check_method,
    chi2_1df_p_value,
    normal_p_value,
    percent,
    significant_digits,
    z_one_sided,
)
from .intervals import MAX_TRIALS_CONDITIONAL_EXACT, effect_bounds, finite_or_none, rate_estimates

METHODS = ("auto", "z-pooled", "z-unpooled", "score", "chi-square", "fisher-exact", "boschloo-exact", "barnard-exact")
EFFECTS = ("difference", "ratio", "odds-ratio")
EQUALITY_METHODS = ("z-pooled", "chi-square", "fisher-exact", "boschloo-exact", "barnard-exact")
EXACT_METHODS = ("fisher-exact", "boschloo-exact", "barnard-exact")
METHOD_EFFECTS = {
    "auto": EFFECTS,
    "z-pooled": EFFECTS,
    "z-unpooled": ("difference",),
    "score": EFFECTS,
    "chi-square": EFFECTS,
    "fisher-exact": EFFECTS,
    "boschloo-exact": EFFECTS,
    "barnard-exact": EFFECTS,
}
EXPECTED_COUNT_THRESHOLD = 5.0  # common practice, no published source
METHOD_NAMES = {
    "z-pooled": "pooled z-test",
    "z-unpooled": "unpooled z-test",
    "score": "Miettinen-Nurminen score test",
    "chi-square": "chi-square test",
    "fisher-exact": "Fisher's exact test",
    "boschloo-exact": "Boschloo's exact test",
    "barnard-exact": "Barnard's exact test",
}


@dataclass(frozen=True, slots=True)
class Estimate:
    """Point estimates; ``None`` where undefined (a ratio with no control successes, say)."""

    control_rate: float
    treatment_rate: float
    difference: float
    relative_lift: float | None
    odds_ratio: float | None


@dataclass(frozen=True, slots=True)
class TestInterval:
    """The interval reported with a test: same effect, same level, same sidedness."""

    method: str
    confidence: float
    lower: float | None
    upper: float | None


@dataclass(frozen=True, slots=True)
class Assumptions:
    """The normal-approximation check: the smallest expected cell count under the null."""

    min_expected_count: float
    threshold: float
    normal_approximation_ok: bool


@dataclass(frozen=True, slots=True)
class TestResult:
    """The outcome of one two-group test."""

    statistic: float | None
    p_value: float | None
    log10_p_value: float | None
    alpha: float
    reject_null: bool | None
    alternative: str
    null_value: float
    effect: str
    method: str
    method_reason: str | None
    continuity_correction: bool
    estimate: Estimate
    interval: TestInterval
    assumptions: Assumptions
    warnings: tuple[str, ...]
    summary: str


@dataclass(frozen=True, slots=True)
class Options:
    """The validated options shared by every comparison of one :func:`compare` call."""

    method: str
    alternative: str
    null_value: float
    effect: str
    alpha: float
    continuity_correction: bool


def check_options(
    method: str = "auto",
    alternative: str = "two-sided",
    null_value: float | None = None,
    effect: str = "difference",
    alpha: float = 0.05,
    continuity_correction: bool = False,
) -> Options:
    """Validate the options of a test and fill in the default null value of the effect."""
    check_method(method, METHODS)
    check_method(effect, EFFECTS, "effect")
    check_alternative(alternative)
    alpha = check_alpha(alpha)
    if effect not in METHOD_EFFECTS[method]:
        raise ValueError(f'method "{method}" tests the difference only; use score for a {effect}')
    no_effect = score.NO_EFFECT[effect]
    null = no_effect if null_value is None else float(null_value)
    if not math.isfinite(null):
        raise ValueError("null_value must be a finite number")
    if effect == "difference" and not (-1.0 < null < 1.0):
        raise ValueError("null_value for a difference must lie strictly between -1 and 1")
    if effect != "difference" and null <= 0.0:
        raise ValueError(f"null_value for a {effect} must be positive (1 means no effect)")
    if method in EQUALITY_METHODS and null != no_effect:
        raise ValueError(
            f'method "{method}" tests no effect only (null_value {no_effect:g}); '
            "use score (or z-unpooled for a difference) for a non-zero null"
        )
    if method == "chi-square" and alternative != "two-sided":
        raise ValueError(
            'method "chi-square" is two-sided only; for alternative greater or less use z-pooled '
            "(its square is the same statistic)"
        )
    if continuity_correction and method not in ("auto", "z-pooled", "z-unpooled", "chi-square"):
        raise ValueError(f'continuity_correction applies to z-pooled, z-unpooled and chi-square, not "{method}"')
    return Options(method, alternative, null, effect, alpha, bool(continuity_correction))


def compare(
    treatment_successes,
    treatment_trials,
    control_successes,
    control_trials,
    *,
    method: str = "auto",
    alternative: str = "two-sided",
    null_value: float | None = None,
    effect: str = "difference",
    alpha: float = 0.05,
    continuity_correction: bool = False,
) -> list[TestResult]:
    """Test H0: effect = ``null_value`` for each treatment/control pair of counts.

    Parameters
    ----------
    treatment_successes, treatment_trials, control_successes, control_trials : array_like of int
        Counts of each comparison, ``0 <= successes <= trials``, ``1 <= trials <= 10**12``.
    method : str
        One of :data:`METHODS`.
    alternative : {"two-sided", "greater", "less"}
        H1: effect != null, effect > null, effect < null.
    null_value : float, optional
        Hypothesised effect; by default no effect (0 for a difference, 1 for a ratio or odds ratio).
    effect : {"difference", "ratio", "odds-ratio"}
        Scale of the null value and of the reported interval.
    alpha : float
        Significance level in (0, 0.5]; the interval has confidence ``1 - alpha`` and the sidedness of
        the test.
    continuity_correction : bool
        Continuity-correct the z-tests (Yates for chi-square).

    Returns
    -------
    list of TestResult, in input order.
    """
    opts = check_options(method, alternative, null_value, effect, alpha, continuity_correction)
    x1, n1 = as_counts(treatment_successes, treatment_trials, "treatment")
    x2, n2 = as_counts(control_successes, control_trials, "control")
    if x1.shape != x2.shape:
        raise ValueError("treatment and control must hold the same number of comparisons")
    return _compare_arrays(x1, n1, x2, n2, opts)


def _compare_arrays(x1, n1, x2, n2, opts: Options) -> list[TestResult]:
    size = x1.shape[0]
    min_expected = _min_expected_counts(x1, n1, x2, n2, opts)
    normal_ok = min_expected >= EXPECTED_COUNT_THRESHOLD

    methods = np.empty(size, dtype=object)
    reasons: list[str | None] = [None] * size
    if opts.method == "auto":
        for i in range(size):
            methods[i], reasons[i] = _auto_choice(opts, float(min_expected[i]), n1[i], n2[i], x1[i] + x2[i])
    else:
        methods[:] = opts.method

    stat = np.full(size, np.nan)
    p = np.full(size, np.nan)
    log10p = np.full(size, np.nan)
    for name in dict.fromkeys(methods.tolist()):
        idx = np.flatnonzero(methods == name)
        stat[idx], p[idx], log10p[idx] = _run_method(name, x1[idx], n1[idx], x2[idx], n2[idx], opts)

    lower, upper, interval_methods, confidence = _test_intervals(x1, n1, x2, n2, methods, opts)
    p1, p2, diff, ratio, odds = rate_estimates(x1, n1, x2, n2)

    results = []
    for i in range(size):
        warnings = _warnings(opts, methods[i], x1[i], n1[i], x2[i], n2[i], float(min_expected[i]), stat[i], p[i])
        p_i = None if np.isnan(p[i]) else float(p[i])
        estimate = Estimate(
            control_rate=float(p2[i]),
            treatment_rate=float(p1[i]),
            difference=float(diff[i]),
            relative_lift=None if np.isnan(ratio[i]) else float(ratio[i] - 1.0),
            odds_ratio=finite_or_none(odds[i]),
        )
        interval = TestInterval(interval_methods[i], confidence, finite_or_none(lower[i]), finite_or_none(upper[i]))
        reject = None if p_i is None else bool(p_i <= opts.alpha)
        result = TestResult(
            statistic=finite_or_none(stat[i]),
            p_value=p_i,
            log10_p_value=finite_or_none(log10p[i]),
            alpha=opts.alpha,
            reject_null=reject,
            alternative=opts.alternative,
            null_value=opts.null_value,
            effect=opts.effect,
            method=methods[i],
            method_reason=reasons[i],
            continuity_correction=opts.continuity_correction and methods[i] in ("z-pooled", "z-unpooled", "chi-square"),
            estimate=estimate,
            interval=interval,
            assumptions=Assumptions(float(min_expected[i]), EXPECTED_COUNT_THRESHOLD, bool(normal_ok[i])),
            warnings=tuple(warnings),
            summary="",
        )
        results.append(_with_summary(result))
    return results


def _min_expected_counts(x1, n1, x2, n2, opts: Options):
    """Smallest of the four expected cell counts under the null (restricted MLE of the rates)."""
    if opts.null_value == score.NO_EFFECT[opts.effect]:
        pooled = (x1 + x2) / (n1 + n2)
        q1 = q2 = pooled
    elif opts.effect == "difference":
        q1, q2 = score.restricted_rates_difference(x1, n1, x2, n2, opts.null_value)
    elif opts.effect == "ratio":
        q1, q2 = score.restricted_rates_ratio(x1, n1, x2, n2, opts.null_value)
    else:
        q1, q2 = score.restricted_rates_odds_ratio(x1, n1, x2, n2, opts.null_value)
    return np.minimum.reduce([n1 * q1, n1 * (1.0 - q1), n2 * q2, n2 * (1.0 - q2)])


def _auto_choice(opts: Options, min_expected: float, n1: float, n2: float, successes: float) -> tuple[str, str]:
    smallest = f"the smallest expected count under the null is {significant_digits(min_expected)}"
    if opts.null_value != score.NO_EFFECT[opts.effect]:
        why = f"the null value is {opts.null_value:g}, not no effect, and only the score test handles that"
        if min_expected < EXPECTED_COUNT_THRESHOLD:
            why += f"; {smallest}, below {EXPECTED_COUNT_THRESHOLD:g}, so treat the p-value with caution"
        return "score", why
    if min_expected >= EXPECTED_COUNT_THRESHOLD:
        return "z-pooled", (
            f"every expected count under the null is at least {EXPECTED_COUNT_THRESHOLD:g} (the smallest is "
            f"{significant_digits(min_expected)}), so the normal approximation is adequate: pooled z-test"
        )
    small = f"{smallest}, below {EXPECTED_COUNT_THRESHOLD:g}, so the normal approximation is not trusted"
    if max(n1, n2) <= exact.MAX_TRIALS_PER_GROUP_BOSCHLOO:
        return "boschloo-exact", f"{small}; Boschloo's exact test is used (exact, and more powerful than Fisher's)"
    if max(n1, n2) <= exact.MAX_TRIALS_FISHER:
        return "fisher-exact", (
            f"{small}; the groups are too large for Boschloo's test "
            f"(over {exact.MAX_TRIALS_PER_GROUP_BOSCHLOO:,} trials), so Fisher's exact test is used"
        )
    return "score", (
        f"{small}, but the groups are too large for an exact test (over {exact.MAX_TRIALS_FISHER:,} trials); "
        "the score test is the most accurate normal approximation"
    )


def _run_method(name: str, x1, n1, x2, n2, opts: Options):
    """Return (statistic, p, log10 p) arrays for the comparisons handled by one method."""
    alt = opts.alternative
    if name in ("z-pooled", "chi-square"):
        pooled = (x1 + x2) / (n1 + n2)
        se = np.sqrt(pooled * (1.0 - pooled) * (1.0 / n1 + 1.0 / n2))
        d = x1 / n1 - x2 / n2
        if opts.continuity_correction:
            d = np.sign(d) * np.maximum(np.abs(d) - 0.5 * (1.0 / n1 + 1.0 / n2), 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.where(se > 0, d / np.where(se > 0, se, 1.0), np.nan)
        if name == "chi-square":
            chi2 = z * z
            p, log10p = chi2_1df_p_value(chi2)
            stat = chi2
        else:
            p, log10p = normal_p_value(z, alt)
            stat = z
        # Every trial had the same outcome in both groups: no evidence of any difference.
        return stat, np.where(se > 0, p, 1.0), np.where(se > 0, log10p, 0.0)
    if name == "z-unpooled":
        p1 = x1 / n1
        p2 = x2 / n2
        se = np.sqrt(p1 * (1.0 - p1) / n1 + p2 * (1.0 - p2) / n2)
        d = p1 - p2 - opts.null_value
        if opts.continuity_correction:
            d = np.sign(d) * np.maximum(np.abs(d) - 0.5 * (1.0 / n1 + 1.0 / n2), 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.where(se > 0, d / np.where(se > 0, se, 1.0), np.nan)
        p, log10p = normal_p_value(z, alt)
        # A zero standard error with the data exactly at the null value is no evidence against it;
        # otherwise the Wald test is undefined (p stays NaN and is reported as null).
        at_null = (se == 0) & (d == 0)
        return z, np.where(at_null, 1.0, p), np.where(at_null, 0.0, log10p)
    if name == "score":
        z = score.score_statistic(x1, n1, x2, n2, opts.null_value, opts.effect, correction=True)
        p, log10p = normal_p_value(z, alt)
        return z, p, log10p
    if name in EXACT_METHODS:
        fn = {
            "fisher-exact": exact.fisher_exact,
            "boschloo-exact": exact.boschloo_exact,
            "barnard-exact": exact.barnard_exact,
        }[name]
        _check_exact_size(name, n1, n2)
        stat = np.full(x1.shape, np.nan)
        p = np.empty(x1.shape)
        for i in range(x1.shape[0]):
            res = fn(int(x1[i]), int(n1[i]), int(x2[i]), int(n2[i]), alternative=alt)
            stat[i] = np.nan if res.statistic is None else res.statistic
            p[i] = min(max(res.pvalue, 0.0), 1.0)
        with np.errstate(divide="ignore"):
            log10p = np.where(p > 0, np.log10(np.where(p > 0, p, 1.0)), np.nan)
        return stat, p, log10p
    raise AssertionError(f"unhandled method {name}")


def _check_exact_size(name: str, n1, n2) -> None:
    limit = {
        "fisher-exact": exact.MAX_TRIALS_FISHER,
        "boschloo-exact": exact.MAX_TRIALS_PER_GROUP_BOSCHLOO,
        "barnard-exact": exact.MAX_TRIALS_PER_GROUP_BARNARD,
    }[name]
    if np.any(np.maximum(n1, n2) > limit):
        raise ValueError(
            f'method "{name}" accepts at most {limit:,} trials per group; with more trials the normal '
            "approximation is accurate, so use z-pooled or score"
        )


def _test_intervals(x1, n1, x2, n2, methods, opts: Options):
    """Return the interval reported with each test: same effect, level and sidedness as the test."""
    confidence = 1.0 - opts.alpha
    z = z_one_sided(confidence) if opts.alternative != "two-sided" else z_one_sided(1.0 - opts.alpha / 2.0)
    z_lower = np.full(x1.shape, np.inf if opts.alternative == "less" else z)
    z_upper = np.full(x1.shape, np.inf if opts.alternative == "greater" else z)
    names = np.array([_interval_method(m, opts, n1[i], n2[i], x1[i] + x2[i]) for i, m in enumerate(methods)],
                     dtype=object)
    lower = np.empty(x1.shape)
    upper = np.empty(x1.shape)
    for name in dict.fromkeys(names.tolist()):
        idx = np.flatnonzero(names == name)
        lower[idx], upper[idx] = effect_bounds(
            opts.effect, x1[idx], n1[idx], x2[idx], n2[idx], name, z_lower[idx], z_upper[idx]
        )
    return lower, upper, names, confidence


def _interval_method(method: str, opts: Options, n1, n2, successes) -> str:
    if method in ("z-pooled", "chi-square"):
        # The Farrington-Manning score statistic at no effect is the pooled z statistic, so this
        # interval excludes the null exactly when the (uncorrected) test rejects.
        return "farrington-manning"
    if method == "z-unpooled":
        return "wald-cc" if opts.continuity_correction else "wald"
    if (
        method == "fisher-exact"
        and opts.effect == "odds-ratio"
        and min(successes, n1 + n2 - successes) <= MAX_TRIALS_CONDITIONAL_EXACT
    ):
        return "conditional-exact"
    return "miettinen-nurminen"


def _warnings(opts: Options, method, x1, n1, x2, n2, min_expected, stat, p) -> list[str]:
    notes: list[str] = []
    if method in ("z-pooled", "z-unpooled", "chi-square", "score") and min_expected < EXPECTED_COUNT_THRESHOLD:
        notes.append(
            f"the smallest expected count under the null is {significant_digits(min_expected)}, below "
            f"{EXPECTED_COUNT_THRESHOLD:g}: the normal approximation may be poor; an exact test is safer"
        )
    if np.isnan(stat) and method in ("z-pooled", "chi-square"):
        notes.append("every trial in both groups had the same outcome: the data carry no evidence of a difference")
    if np.isnan(stat) and method == "z-unpooled":
        notes.append(
            "the unpooled standard error is 0 (each rate is 0 or 1), so the Wald test is undefined; use score "
            "or an exact test"
        )
    if opts.effect == "ratio" and x2 == 0:
        notes.append("the relative lift is undefined: the control group has no successes")
    elif opts.effect != "ratio" and x2 == 0 and x1 > 0:
        notes.append("the relative lift is undefined: the control group has no successes")
    if opts.continuity_correction and method in ("z-pooled", "chi-square"):
        notes.append(
            "the reported interval is not continuity-corrected, so it may disagree with the test near the edge"
        )
    if not np.isnan(p) and p == 0.0:
        notes.append("the p-value is below the smallest positive double; see log10_p_value")
    return notes


def _format_effect(effect: str, value: float | None, signed: bool = True) -> str:
    if value is None:
        return "unbounded"
    if effect == "difference":
        pts = 100.0 * value
        return f"{pts:+.2f}" if signed else f"{pts:.2f}"
    return significant_digits(value)


def _with_summary(r: TestResult) -> TestResult:
    e = r.estimate
    conf = _level(r.interval.confidence)
    if r.effect == "difference":
        effect_text = f"a difference of {_format_effect('difference', e.difference)} percentage points"
        unit = " points"
    elif r.effect == "ratio":
        ratio = None if e.relative_lift is None else e.relative_lift + 1.0
        effect_text = "a ratio of " + ("undefined" if ratio is None else significant_digits(ratio))
        unit = ""
    else:
        effect_text = "an odds ratio of " + ("undefined" if e.odds_ratio is None else significant_digits(e.odds_ratio))
        unit = ""
    lo = _format_effect(r.effect, r.interval.lower)
    hi = _format_effect(r.effect, r.interval.upper)
    if r.alternative == "greater":
        bounds = f"{conf} lower bound {lo}{unit}"
    elif r.alternative == "less":
        bounds = f"{conf} upper bound {hi}{unit}"
    else:
        bounds = f"{conf} CI {lo} to {hi}{unit}"
    head = (
        f"Treatment {percent(e.treatment_rate, 2)} vs control {percent(e.control_rate, 2)}: {effect_text} ({bounds})"
    )
    level = _level(r.alpha)
    if r.p_value is None:
        verdict = f"the {METHOD_NAMES[r.method]} is undefined for these counts"
    else:
        p_text = _format_p(r.p_value, r.log10_p_value)
        null_text = _null_text(r)
        if r.reject_null:
            verdict = f"p = {p_text}, so the data show {null_text} at the {level} level"
        else:
            verdict = f"p = {p_text}, so the data do not show {null_text} at the {level} level"
    text = f"{head}; {verdict} ({METHOD_NAMES[r.method]})."
    return TestResult(**{**{f: getattr(r, f) for f in TestResult.__slots__}, "summary": text})


def _level(fraction: float) -> str:
    """Format 0.95 as "95%" and 0.975 as "97.5%"."""
    return percent(fraction, 0 if abs(fraction * 100 - round(fraction * 100)) < 1e-9 else 1)


def _null_text(r: TestResult) -> str:
    name = {"difference": "difference", "ratio": "ratio", "odds-ratio": "odds ratio"}[r.effect]
    no_effect = r.null_value == score.NO_EFFECT[r.effect]
    value = f"{100 * r.null_value:+g} percentage points" if r.effect == "difference" else f"{r.null_value:g}"
    if r.alternative == "two-sided":
        return "a difference between the rates" if no_effect else f"a {name} other than {value}"
    word = "higher" if r.alternative == "greater" else "lower"
    if no_effect:
        return f"a {word} treatment rate"
    return f"a {name} {'above' if r.alternative == 'greater' else 'below'} {value}"


def _format_p(p: float, log10p: float | None) -> str:
    if p >= 0.001:
        return f"{p:.3g}"
    if p > 0:
        return f"{p:.2e}"
    return f"10^{log10p:.1f}" if log10p is not None else "0"


