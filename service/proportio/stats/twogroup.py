"""Hypothesis tests comparing the success rates of a treatment and a control group.

:func:`compare` is vectorised: it takes arrays of counts and one set of options and returns one
:class:`TestResult` per comparison. A single comparison is a batch of one: :func:`compare_one` and a
batch of one compute the commonest cases with Python floats (``_one_values``) and everything else with the
array code, and the float path gives the array code's values to the last bit, so a batch and a single call
never disagree.

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
from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from . import exact, score
from ._common import (
    MAX_TRIALS,
    as_counts,
    check_alpha,
    check_alternative,
    check_method,
    chi2_1df_p_value,
    normal_p_value,
    normal_p_value_float,
    percent,
    rate_difference,
    significant_digits,
    z_one_sided,
)
from .intervals import MAX_TRIALS_CONDITIONAL_EXACT, effect_bounds, rate_estimates

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
# A ratio or odds ratio beyond 10^6 cannot be told from infinity with counts up to 10^12 (and its square
# would overflow float64 near 1e154).
MAX_RATIO_NULL = 1e6
# Counts of at most 10^12 cannot resolve a difference below 10^-12 from 0.
MIN_DIFFERENCE_NULL = 1e-13
# The parts of a comparison's outcome that compare_columns can skip: the interval (a root search per limit
# for the score intervals), the reason auto gives for its choice, and the summary sentence (which quotes
# the interval, so it needs it). The tests, estimates, assumptions and warnings are always computed.
OPTIONAL_PARTS = frozenset({"interval", "reason", "summary"})
# Texts shared by the array code and the single-comparison path (_one_values).
_ADEQUATE_REASON = (
    f"every expected count under the null is at least {EXPECTED_COUNT_THRESHOLD:g} (the smallest is {{}}), so "
    "the normal approximation is adequate: pooled z-test"
)
_SMALL_COUNT_NOTE = (
    f"the smallest expected count under the null is {{}}, below {EXPECTED_COUNT_THRESHOLD:g}: the normal "
    "approximation may be poor; {}"
)
EXACT_ADVICE = "an exact test is safer"
_UNCORRECTED_NOTE = "the reported interval is not continuity-corrected, so it may disagree with the test near the edge"
_UNDERFLOW_NOTE = ("the p-value is below the smallest positive double (about 1e-308); log10_p_value gives its size "
                   "where the method can compute it")


def small_count_note(min_expected: float, advice: str = EXACT_ADVICE) -> str:
    """The caution given when the smallest expected count under the null is below the threshold."""
    return _SMALL_COUNT_NOTE.format(significant_digits(min_expected), advice)


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
    if effect == "difference" and 0.0 < abs(null) < MIN_DIFFERENCE_NULL:
        # Below this the restricted variance underflows: such a null cannot be told from 0.
        raise ValueError(f"null_value for a difference must be 0 or at least {MIN_DIFFERENCE_NULL:g} in size")
    if effect != "difference" and not (0.0 < null <= MAX_RATIO_NULL):
        raise ValueError(
            f"null_value for a {effect} must be positive and at most {MAX_RATIO_NULL:g} (1 means no effect)"
        )
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
    interval_alpha: float | None = None,
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
    interval_alpha : float, optional
        Report the interval at confidence ``1 - interval_alpha`` instead of ``1 - alpha`` (same method and
        sidedness). Pass ``alpha / m`` for Bonferroni intervals with simultaneous coverage over ``m``
        comparisons (Dunn 1961, JASA 56:52-64); the interval then no longer mirrors the test's decision.

    Returns
    -------
    list of TestResult, in input order.
    """
    return results_from_columns(compare_columns(
        treatment_successes, treatment_trials, control_successes, control_trials, method=method,
        alternative=alternative, null_value=null_value, effect=effect, alpha=alpha,
        continuity_correction=continuity_correction, interval_alpha=interval_alpha,
    ))


def compare_one(
    treatment_successes: int,
    treatment_trials: int,
    control_successes: int,
    control_trials: int,
    *,
    method: str = "auto",
    alternative: str = "two-sided",
    null_value: float | None = None,
    effect: str = "difference",
    alpha: float = 0.05,
    continuity_correction: bool = False,
) -> TestResult:
    """Test one comparison: ``compare([x_t], [n_t], [x_c], [n_c], ...)[0]``, without the cost of arrays.

    The same numbers as :func:`compare` to the last bit (the same float path a batch of one takes); counts
    that are not plain integers in range, and cases the float path does not handle, go through
    :func:`compare` itself, which also raises its errors.
    """
    counts = (treatment_successes, treatment_trials, control_successes, control_trials)
    if all(type(c) is int for c in counts) and (
            0 < treatment_successes < treatment_trials <= MAX_TRIALS and 0 < control_successes < control_trials
            <= MAX_TRIALS):
        opts = check_options(method, alternative, null_value, effect, alpha, continuity_correction)
        one = _one_values(float(treatment_successes), float(treatment_trials), float(control_successes),
                          float(control_trials), opts, None, OPTIONAL_PARTS)
        if one is not None:
            row, confidence, _ = one
            return _test_result(opts, confidence, *row)
    return compare([treatment_successes], [treatment_trials], [control_successes], [control_trials], method=method,
                   alternative=alternative, null_value=null_value, effect=effect, alpha=alpha,
                   continuity_correction=continuity_correction)[0]


@dataclass(frozen=True, slots=True)
class TestColumns:
    """The outcomes of many comparisons sharing one set of options: one list per field of :class:`TestResult`.

    The lists hold exactly the values the result objects carry (Python floats, ``None`` where a quantity is
    undefined or unbounded), so a batch can be written out without building an object per comparison.
    ``p_values`` is the p-value array with NaN where the test is undefined. A field of an optional part
    that was not asked for (see :data:`OPTIONAL_PARTS`) is None instead of a list.
    """

    options: Options
    statistic: list
    p_value: list
    log10_p_value: list
    reject_null: list
    method: list
    method_reason: list
    continuity_correction: list
    control_rate: list
    treatment_rate: list
    difference: list
    relative_lift: list
    odds_ratio: list
    interval_method: list
    interval_confidence: float
    lower: list
    upper: list
    min_expected_count: list
    normal_approximation_ok: list
    warnings: list
    summary: list
    p_values: np.ndarray

    def __len__(self) -> int:
        return len(self.statistic)


@dataclass(frozen=True, slots=True)
class TestArrays:
    """The outcomes of many comparisons sharing one set of options, as numpy arrays (see :class:`TestColumns`).

    Floats are NaN where a quantity is undefined; infinite statistics, bounds and odds ratios are unbounded
    ones. The text fields (``method_reason``, ``interval_method``, ``warnings``, ``summary``) are lists;
    ``method`` is an object array. A field of an optional part not asked for is None.
    """

    options: Options
    statistic: np.ndarray
    p_value: np.ndarray
    log10_p_value: np.ndarray
    method: np.ndarray
    method_reason: list | None
    continuity_correction: np.ndarray
    control_rate: np.ndarray
    treatment_rate: np.ndarray
    difference: np.ndarray
    relative_lift: np.ndarray
    odds_ratio: np.ndarray
    interval_method: list | None
    interval_confidence: float
    lower: np.ndarray | None
    upper: np.ndarray | None
    min_expected_count: np.ndarray
    normal_approximation_ok: np.ndarray
    warnings: list
    summary: list | None

    def __len__(self) -> int:
        return int(self.statistic.shape[0])

    def reject_null_list(self) -> list:
        """``p_value <= alpha`` for each comparison, None where the p-value is undefined."""
        return _to_list(self.p_value <= self.options.alpha, np.isnan(self.p_value))


def compare_arrays(
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
    interval_alpha: float | None = None,
    parts: frozenset[str] = OPTIONAL_PARTS,
) -> TestArrays:
    """Run :func:`compare_columns` and return the outcomes as arrays (see :class:`TestArrays`).

    For callers that write many comparisons out column by column: the arrays are not turned into lists
    of Python objects, which costs more than the tests. The values are those of :func:`compare_columns`.
    """
    opts, x1, n1, x2, n2, interval_alpha, parts = _checked(
        treatment_successes, treatment_trials, control_successes, control_trials, method, alternative,
        null_value, effect, alpha, continuity_correction, interval_alpha, parts)
    return _compare_arrays(x1, n1, x2, n2, opts, interval_alpha, parts)


def compare_columns(
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
    interval_alpha: float | None = None,
    parts: frozenset[str] = OPTIONAL_PARTS,
) -> TestColumns:
    """Run :func:`compare` and return its results as columns (see :class:`TestColumns`).

    ``compare`` is this function followed by :func:`results_from_columns`, so the two never disagree.
    ``parts`` names the optional parts to compute (all by default; see :data:`OPTIONAL_PARTS`): a caller that
    only needs the tests skips the interval search, the reasons and the summary sentences, which cost more
    than the tests themselves. What is computed does not depend on ``parts``.
    """
    opts, x1, n1, x2, n2, interval_alpha, parts = _checked(
        treatment_successes, treatment_trials, control_successes, control_trials, method, alternative,
        null_value, effect, alpha, continuity_correction, interval_alpha, parts)
    return _compare_columns(x1, n1, x2, n2, opts, interval_alpha, parts)


def _checked(treatment_successes, treatment_trials, control_successes, control_trials, method, alternative,
             null_value, effect, alpha, continuity_correction, interval_alpha, parts):
    """Check the arguments of compare_columns / compare_arrays and return them converted."""
    unknown = set(parts) - OPTIONAL_PARTS
    if unknown:
        raise ValueError(f"unknown parts {sorted(unknown)}; use some of {sorted(OPTIONAL_PARTS)}")
    opts = check_options(method, alternative, null_value, effect, alpha, continuity_correction)
    if interval_alpha is not None:
        interval_alpha = float(interval_alpha)
        if not (0.0 < interval_alpha < 1.0):
            raise ValueError(f"interval_alpha must be in (0, 1), got {interval_alpha}")
    x1, n1 = as_counts(treatment_successes, treatment_trials, "treatment")
    x2, n2 = as_counts(control_successes, control_trials, "control")
    if x1.shape != x2.shape:
        raise ValueError("treatment and control must hold the same number of comparisons")
    return opts, x1, n1, x2, n2, interval_alpha, frozenset(parts)


def results_from_columns(cols: TestColumns) -> list[TestResult]:
    """Turn columns into one :class:`TestResult` per comparison, in order."""
    opts = cols.options
    conf = cols.interval_confidence
    return [
        _test_result(opts, conf, *row)
        for row in zip(
            cols.statistic, cols.p_value, cols.log10_p_value, cols.reject_null, cols.method, cols.method_reason,
            cols.continuity_correction, cols.control_rate, cols.treatment_rate, cols.difference, cols.relative_lift,
            cols.odds_ratio, cols.interval_method, cols.lower, cols.upper, cols.min_expected_count,
            cols.normal_approximation_ok, cols.warnings, cols.summary, strict=True,
        )
    ]


def _test_result(opts: Options, conf: float, stat, p, log10p, reject, method, reason, cc, cr, tr, diff, lift, odds,
                 imethod, lo, hi, min_exp, ok, notes, summary) -> TestResult:
    """One :class:`TestResult` from the values of one comparison, in the order of :class:`TestColumns`."""
    return TestResult(
        statistic=stat, p_value=p, log10_p_value=log10p, alpha=opts.alpha, reject_null=reject,
        alternative=opts.alternative, null_value=opts.null_value, effect=opts.effect, method=method,
        method_reason=reason, continuity_correction=cc,
        estimate=Estimate(control_rate=cr, treatment_rate=tr, difference=diff, relative_lift=lift, odds_ratio=odds),
        interval=TestInterval(imethod, conf, lo, hi),
        assumptions=Assumptions(min_exp, EXPECTED_COUNT_THRESHOLD, ok),
        warnings=notes, summary=summary,
    )


def _to_list(values: np.ndarray, undefined: np.ndarray) -> list:
    """``values`` as a list of Python floats with None wherever ``undefined`` holds."""
    out = values.tolist()
    if undefined.any():
        for i in np.flatnonzero(undefined).tolist():
            out[i] = None
    return out


def _is_one_of(groups: dict[str, np.ndarray], names: tuple[str, ...], size: int) -> np.ndarray:
    """Mask of the comparisons whose method is one of ``names``, from the index groups of the methods.

    Cheaper than comparing an object array of method names (``np.isin`` costs milliseconds per 100,000).
    """
    mask = np.zeros(size, dtype=bool)
    for name, idx in groups.items():
        if name in names:
            mask[idx] = True
    return mask


def _compare_columns(x1, n1, x2, n2, opts: Options, interval_alpha: float | None = None,
                     parts: frozenset[str] = OPTIONAL_PARTS) -> TestColumns:
    if x1.shape == (1,):
        one = _compare_one(float(x1[0]), float(n1[0]), float(x2[0]), float(n2[0]), opts, interval_alpha, parts)
        if one is not None:
            return one
    if "summary" not in parts:
        return _lists_from_arrays(_compare_arrays(x1, n1, x2, n2, opts, interval_alpha, parts))
    # The summaries are written from the lists: build them once.
    arrays = _compare_arrays(x1, n1, x2, n2, opts, interval_alpha, (parts - {"summary"}) | {"interval"})
    lists = _lists_from_arrays(arrays)
    return replace(lists, summary=_summaries_of(lists))


def _compare_arrays(x1, n1, x2, n2, opts: Options, interval_alpha: float | None = None,
                    parts: frozenset[str] = OPTIONAL_PARTS) -> TestArrays:
    # Everything is computed on whole arrays; the only loops left run over comparisons that need a
    # string of their own (summary, reason, warnings) or an exact test.
    min_expected = _min_expected_counts(x1, n1, x2, n2, opts)
    normal_ok = min_expected >= EXPECTED_COUNT_THRESHOLD
    want_summary = "summary" in parts
    want_interval = want_summary or "interval" in parts

    reasons: list | None
    if opts.method == "auto" and "reason" in parts:
        methods, reasons = _auto_choices(opts, min_expected, n1, n2)
    elif opts.method == "auto":
        methods, reasons = _auto_methods(opts, min_expected, n1, n2), None
    else:
        methods = _labels(x1.shape[0], opts.method)
        reasons = [None] * x1.shape[0] if "reason" in parts else None

    stat = np.full(x1.shape, np.nan)
    p = np.full(x1.shape, np.nan)
    log10p = np.full(x1.shape, np.nan)
    groups = _index_groups(methods)
    for name, idx in groups.items():
        stat[idx], p[idx], log10p[idx] = _run_method(name, x1[idx], n1[idx], x2[idx], n2[idx], opts)

    if want_interval:
        lower, upper, interval_methods, confidence = _test_intervals(x1, n1, x2, n2, groups, opts, interval_alpha)
    else:
        lower, upper, confidence = _exact_test_intervals(x1, n1, x2, n2, groups, opts, interval_alpha)
        interval_methods = None
    p1, p2, diff, ratio, odds = rate_estimates(x1, n1, x2, n2)

    if opts.continuity_correction:
        cc = _is_one_of(groups, ("z-pooled", "z-unpooled", "chi-square"), x1.shape[0])
    else:
        cc = np.zeros(x1.shape[0], dtype=bool)
    warnings = _warnings(opts, methods, groups, x1, x2, min_expected, stat, p)
    warnings = _add_interval_warnings(warnings, opts, methods, groups, x1, n1, x2, n2, lower, upper, p)
    arrays = TestArrays(
        options=opts, statistic=stat, p_value=p, log10_p_value=log10p, method=methods, method_reason=reasons,
        continuity_correction=cc, control_rate=p2, treatment_rate=p1, difference=diff, relative_lift=ratio - 1.0,
        odds_ratio=odds, interval_method=interval_methods, interval_confidence=confidence,
        lower=lower if want_interval else None, upper=upper if want_interval else None,
        min_expected_count=min_expected, normal_approximation_ok=normal_ok, warnings=warnings, summary=None,
    )
    if not want_summary:
        return arrays
    return replace(arrays, summary=_summaries_of(_lists_from_arrays(arrays)))


def _summaries_of(lists: TestColumns) -> list[str]:
    """The summary sentence of each comparison, written from its values (the interval included)."""
    return _summaries(
        lists.options, lists.interval_confidence, lists.method, lists.treatment_rate, lists.control_rate,
        lists.difference, lists.relative_lift, lists.odds_ratio, lists.lower, lists.upper, lists.p_value,
        lists.log10_p_value, lists.reject_null,
    )


# --------------------------------------------------------------------------------------------------
# One comparison with floats
#
# A single /v1/tests call is a batch of one, and numpy's fixed cost per operation (about a microsecond on
# arrays of one element) makes the array code above cost ~250 us for it, ten times its arithmetic. The
# commonest single comparison (a difference tested by a z-test or chi-square, every count strictly between
# 0 and its trials, auto resolving to the pooled z-test) is computed here with Python floats instead. It
# must give exactly the values of the array code, bit for bit, so that a single call and the same
# comparison inside a batch never disagree (tests/unit/test_single_comparison_path.py checks this over
# random tables and every option it handles): the same operations in the same order (IEEE arithmetic and
# square roots round the same in Python and numpy), and the very same numpy/scipy functions, called on
# floats, for everything else (exp, log_ndtr, the score interval's scalar solver). Anything else (another
# effect, the score or an exact test, a count of 0 or all) returns None and goes to the array code.

_ONE_METHODS = ("auto", "z-pooled", "z-unpooled", "chi-square")


def _compare_one(x1: float, n1: float, x2: float, n2: float, opts: Options, interval_alpha: float | None,
                 parts: frozenset[str]) -> TestColumns | None:
    """The columns of one comparison computed with floats, or None where the array code must do it."""
    one = _one_values(x1, n1, x2, n2, opts, interval_alpha, parts)
    if one is None:
        return None
    row, confidence, p_raw = one
    (stat, p, log10p, reject, method, reason, cc, control_rate, treatment_rate, diff, lift, odds, interval_method,
     lower, upper, min_expected, normal_ok, notes, summary) = row
    want_interval = interval_method is not None
    return TestColumns(
        options=opts,
        statistic=[stat],
        p_value=[p],
        log10_p_value=[log10p],
        reject_null=[reject],
        method=[method],
        method_reason=[reason] if "reason" in parts else None,
        continuity_correction=[cc],
        control_rate=[control_rate],
        treatment_rate=[treatment_rate],
        difference=[diff],
        relative_lift=[lift],
        odds_ratio=[odds],
        interval_method=[interval_method] if want_interval else None,
        interval_confidence=confidence,
        lower=[lower] if want_interval else None,
        upper=[upper] if want_interval else None,
        min_expected_count=[min_expected],
        normal_approximation_ok=[normal_ok],
        warnings=[notes],
        summary=None if summary is None else [summary],
        p_values=np.array([p_raw]),
    )


def _one_values(x1: float, n1: float, x2: float, n2: float, opts: Options, interval_alpha: float | None,
                parts: frozenset[str]) -> tuple | None:
    """The values of one comparison, or None where the array code must compute it.

    ``(row, interval_confidence, p)``: ``row`` holds one value per list of :class:`TestColumns`, in the order
    :func:`results_from_columns` zips them (``statistic`` ... ``summary``), each as the columns hold it (None
    where undefined or not asked for; ``interval_method`` None when no interval was asked for); ``p`` is the
    p-value with NaN where undefined.
    """
    method = opts.method
    if opts.effect != "difference" or method not in _ONE_METHODS or not (0.0 < x1 < n1 and 0.0 < x2 < n2):
        return None
    pooled = (x1 + x2) / (n1 + n2)
    if opts.null_value == 0.0:
        # _min_expected_counts at no effect.
        min_expected = min(n1 * pooled, n1 * (1.0 - pooled), n2 * pooled, n2 * (1.0 - pooled))
    elif method == "z-unpooled":
        q1, q2 = score.restricted_rates_difference(np.array([x1]), np.array([n1]), np.array([x2]), np.array([n2]),
                                                   opts.null_value)
        min_expected = float(np.minimum.reduce([n1 * q1, n1 * (1.0 - q1), n2 * q2, n2 * (1.0 - q2)])[0])
    else:
        return None  # auto with a non-zero null: the score test
    reason = None
    if method == "auto":
        if not min_expected >= EXPECTED_COUNT_THRESHOLD:
            return None  # an exact test
        method = "z-pooled"
        if "reason" in parts:
            reason = _ADEQUATE_REASON.format(significant_digits(min_expected))

    # The rates, as rate_estimates, _run_method and difference_bounds each compute them.
    p1 = x1 / n1
    p2 = x2 / n2

    # _run_method
    cc_applied = opts.continuity_correction
    half_width = 0.5 * (1.0 / n1 + 1.0 / n2)
    if (x1 + x2) > 0.5 * (n1 + n2):  # rate_difference
        diff = (n2 - x2) / n2 - (n1 - x1) / n1
    else:
        diff = x1 / n1 - x2 / n2
    if method == "z-unpooled":
        se = math.sqrt(p1 * ((n1 - x1) / n1) / n1 + p2 * ((n2 - x2) / n2) / n2)
        d = diff - opts.null_value
    else:
        se = math.sqrt(pooled * ((n1 - x1 + n2 - x2) / (n1 + n2)) * (1.0 / n1 + 1.0 / n2))
        d = diff
    if cc_applied:
        # np.sign(d) * np.maximum(np.abs(d) - half_width, 0.0)
        d = (1.0 if d > 0.0 else -1.0 if d < 0.0 else 0.0) * max(abs(d) - half_width, 0.0)
    if not se > 0.0:
        return None
    z = d / se
    if method == "chi-square":
        stat = z * z
        # chi2_1df_p_value: the two-sided normal tail at sqrt(max(stat, 0)); stat = z * z is never negative.
        p, log10p = normal_p_value_float(math.sqrt(stat), "two-sided")
    else:
        stat = z
        p, log10p = normal_p_value_float(z, opts.alternative)

    # _test_intervals / difference_bounds
    want_summary = "summary" in parts
    want_interval = want_summary or "interval" in parts
    level_alpha = opts.alpha if interval_alpha is None else interval_alpha
    confidence = 1.0 - level_alpha
    lower = upper = math.nan
    interval_method = None
    if want_interval:
        zc = z_one_sided(confidence) if opts.alternative != "two-sided" else z_one_sided(1.0 - level_alpha / 2.0)
        z_lower = math.inf if opts.alternative == "less" else zc
        z_upper = math.inf if opts.alternative == "greater" else zc
        if method == "z-unpooled":
            interval_method = "wald-cc" if cc_applied else "wald"
            wald_se = math.sqrt(p1 * (1.0 - p1) / n1 + p2 * (1.0 - p2) / n2)
            shift = half_width if cc_applied else 0.0
            lower = -1.0 if math.isinf(z_lower) else (p1 - p2) - (z_lower * wald_se + shift)
            upper = 1.0 if math.isinf(z_upper) else (p1 - p2) + (z_upper * wald_se + shift)
        else:
            interval_method = "farrington-manning"
            try:
                lower, upper = score._scalar_difference_bounds(x1, n1, x2, n2, z_lower, z_upper, False)
            except (score._Edge, ArithmeticError, ValueError):
                return None
        lower = min(max(lower, -1.0), 1.0)
        upper = min(max(upper, -1.0), 1.0)

    # _warnings (the other cautions need a count of 0 or all, or another method or effect)
    notes = []
    if min_expected < EXPECTED_COUNT_THRESHOLD:
        notes.append(small_count_note(min_expected))
    if cc_applied and method != "z-unpooled":
        notes.append(_UNCORRECTED_NOTE)
    if p == 0.0:
        notes.append(_UNDERFLOW_NOTE)

    # rate_estimates and _lists_from_arrays
    lift = p1 / p2 - 1.0
    odds = (x1 * (n2 - x2)) / ((n1 - x1) * x2)
    odds_out = odds if math.isfinite(odds) else None
    defined = not math.isnan(p)
    p_out = p if defined else None
    log10p_out = log10p if math.isfinite(log10p) else None
    reject = p <= opts.alpha if defined else None
    lower_out = lower if math.isfinite(lower) else None
    upper_out = upper if math.isfinite(upper) else None
    summary = None
    if want_summary:
        summary = _summaries(opts, confidence, (method,), (p1,), (p2,), (diff,), (lift,), (odds_out,), (lower_out,),
                             (upper_out,), (p_out,), (log10p_out,), (reject,))[0]
    row = (stat if math.isfinite(stat) else None, p_out, log10p_out, reject, method, reason, cc_applied, p2, p1, diff,
           lift, odds_out, interval_method, lower_out if want_interval else None,
           upper_out if want_interval else None, min_expected, min_expected >= EXPECTED_COUNT_THRESHOLD,
           tuple(notes), summary)
    return row, confidence, p


def _lists_from_arrays(a: TestArrays) -> TestColumns:
    """The columns of ``a`` as lists of Python values, None wherever a value is undefined or unbounded."""
    p_undefined = np.isnan(a.p_value)
    return TestColumns(
        options=a.options,
        statistic=_to_list(a.statistic, ~np.isfinite(a.statistic)),
        p_value=_to_list(a.p_value, p_undefined),
        log10_p_value=_to_list(a.log10_p_value, ~np.isfinite(a.log10_p_value)),
        reject_null=a.reject_null_list(),
        method=a.method.tolist(),
        method_reason=a.method_reason,
        continuity_correction=a.continuity_correction.tolist(),
        control_rate=a.control_rate.tolist(),
        treatment_rate=a.treatment_rate.tolist(),
        difference=a.difference.tolist(),
        relative_lift=_to_list(a.relative_lift, np.isnan(a.relative_lift)),
        odds_ratio=_to_list(a.odds_ratio, ~np.isfinite(a.odds_ratio)),
        interval_method=a.interval_method,
        interval_confidence=a.interval_confidence,
        lower=None if a.lower is None else _to_list(a.lower, ~np.isfinite(a.lower)),
        upper=None if a.upper is None else _to_list(a.upper, ~np.isfinite(a.upper)),
        min_expected_count=a.min_expected_count.tolist(),
        normal_approximation_ok=a.normal_approximation_ok.tolist(),
        warnings=a.warnings,
        summary=a.summary,
        p_values=a.p_value,
    )


def _labels(size: int, name: str) -> np.ndarray:
    """An object array holding ``name`` ``size`` times (``np.full`` with an object is 30x slower)."""
    out = np.empty(size, dtype=object)
    out.fill(name)
    return out


def _index_groups(labels: np.ndarray) -> dict[str, np.ndarray]:
    """Map each distinct label to the indices carrying it, in order of first appearance."""
    if labels.shape[0] and (labels == labels[0]).all():
        return {labels[0]: np.arange(labels.shape[0])}
    return {name: np.flatnonzero(labels == name) for name in dict.fromkeys(labels.tolist())}


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


def _auto_choices(opts: Options, min_expected: np.ndarray, n1: np.ndarray, n2: np.ndarray):
    """Return the method auto picks for each comparison (object array) and the reason (list of str)."""
    threshold = f"{EXPECTED_COUNT_THRESHOLD:g}"
    smallest = [significant_digits(m) for m in min_expected.tolist()]
    size = min_expected.shape[0]
    if opts.null_value != score.NO_EFFECT[opts.effect]:
        why = f"the null value is {opts.null_value:g}, not no effect, and only the score test handles that"
        caution = (f"{why}; the smallest expected count under the null is {{}}, below {threshold}, so treat "
                   "the p-value with caution")
        reasons = [caution.format(s) if is_small else why
                   for s, is_small in zip(smallest, (min_expected < EXPECTED_COUNT_THRESHOLD).tolist(), strict=True)]
        return _labels(size, "score"), reasons
    methods = _auto_methods(opts, min_expected, n1, n2)
    below = ~(min_expected >= EXPECTED_COUNT_THRESHOLD)
    adequate = _ADEQUATE_REASON
    not_trusted = (
        f"the smallest expected count under the null is {{}}, below {threshold}, so the normal approximation "
        "is not trusted"
    )
    tails = {
        "boschloo-exact": "; Boschloo's exact test is used (exact, and more powerful than Fisher's)",
        "fisher-exact": (
            f"; the groups are too large for Boschloo's test (over {exact.MAX_TRIALS_PER_GROUP_BOSCHLOO:,} trials), "
            "so Fisher's exact test is used"
        ),
        "score": (
            f", but the groups are too large for an exact test (over {exact.MAX_TRIALS_FISHER:,} trials); "
            "the score test is the most accurate normal approximation"
        ),
    }
    reasons = [
        not_trusted.format(s) + tails[m] if is_below else adequate.format(s)
        for s, is_below, m in zip(smallest, below.tolist(), methods.tolist(), strict=True)
    ]
    return methods, reasons


def _auto_methods(opts: Options, min_expected: np.ndarray, n1: np.ndarray, n2: np.ndarray) -> np.ndarray:
    """Return the method auto picks for each comparison, as an object array."""
    size = min_expected.shape[0]
    if opts.null_value != score.NO_EFFECT[opts.effect]:
        return _labels(size, "score")
    methods = _labels(size, "z-pooled")
    for name, mask in _auto_fallbacks(min_expected, n1, n2).items():
        methods[mask] = name
    return methods


def _auto_fallbacks(min_expected: np.ndarray, n1: np.ndarray, n2: np.ndarray) -> dict[str, np.ndarray]:
    """Masks of the comparisons auto (at no effect) does not give the pooled z-test, by the method it picks."""
    largest = np.maximum(n1, n2)
    # Not "< threshold": a count that is not at least the threshold (NaN included) is not trusted.
    below = ~(min_expected >= EXPECTED_COUNT_THRESHOLD)
    return {
        "boschloo-exact": below & (largest <= exact.MAX_TRIALS_PER_GROUP_BOSCHLOO),
        "fisher-exact": below & (largest > exact.MAX_TRIALS_PER_GROUP_BOSCHLOO) & (largest <= exact.MAX_TRIALS_FISHER),
        "score": below & ~(largest <= exact.MAX_TRIALS_FISHER),
    }


def exact_test_masks(treatment_successes, treatment_trials, control_successes, control_trials,
                     options: Options) -> dict[str, np.ndarray]:
    """Masks of the comparisons :func:`compare` gives each exact test, without running anything.

    The masks of :func:`planned_methods` for the exact methods only, computed without a list of names (which
    costs milliseconds per 100,000): lets a caller bound the cost of a request before computing it.
    """
    x1, n1 = as_counts(treatment_successes, treatment_trials, "treatment")
    x2, n2 = as_counts(control_successes, control_trials, "control")
    if options.method in EXACT_METHODS:
        return {options.method: np.ones(x1.shape[0], dtype=bool)}
    if options.method != "auto" or options.null_value != score.NO_EFFECT[options.effect]:
        return {}
    fallbacks = _auto_fallbacks(_min_expected_counts(x1, n1, x2, n2, options), n1, n2)
    return {name: mask for name, mask in fallbacks.items() if name in EXACT_METHODS}


def planned_methods(treatment_successes, treatment_trials, control_successes, control_trials,
                    options: Options) -> list[str]:
    """Return the test :func:`compare` runs on each comparison (``auto`` resolved) without running it.

    Lets a caller bound the cost of a request (exact tests are expensive) before computing it.
    """
    x1, n1 = as_counts(treatment_successes, treatment_trials, "treatment")
    x2, n2 = as_counts(control_successes, control_trials, "control")
    if options.method != "auto":
        return [options.method] * x1.shape[0]
    min_expected = _min_expected_counts(x1, n1, x2, n2, options)
    return _auto_methods(options, min_expected, n1, n2).tolist()


def _run_method(name: str, x1, n1, x2, n2, opts: Options):
    """Return (statistic, p, log10 p) arrays for the comparisons handled by one method.

    ``_one_values`` repeats the z-tests and chi-square with floats, operation for operation: change both.
    """
    alt = opts.alternative
    if name in ("z-pooled", "chi-square"):
        pooled = (x1 + x2) / (n1 + n2)
        # The complement from the failure count keeps its relative precision when the rate is near 1.
        se = np.sqrt(pooled * ((n1 - x1 + n2 - x2) / (n1 + n2)) * (1.0 / n1 + 1.0 / n2))
        d = rate_difference(x1, n1, x2, n2)
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
        se = np.sqrt(p1 * ((n1 - x1) / n1) / n1 + p2 * ((n2 - x2) / n2) / n2)
        d = rate_difference(x1, n1, x2, n2) - opts.null_value
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
        check_exact_size(name, n1, n2)
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


def check_exact_size(name: str, n1, n2) -> None:
    """Raise a ValueError suggesting a normal-approximation method when an exact test would be too large."""
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


def _test_intervals(x1, n1, x2, n2, method_groups: dict[str, np.ndarray], opts: Options,
                    interval_alpha: float | None = None):
    """Return the interval reported with each test: same effect and sidedness as the test.

    The level is that of the test (``1 - alpha``) unless ``interval_alpha`` asks for another one.
    """
    level_alpha = opts.alpha if interval_alpha is None else interval_alpha
    confidence = 1.0 - level_alpha
    z = z_one_sided(confidence) if opts.alternative != "two-sided" else z_one_sided(1.0 - level_alpha / 2.0)
    z_lower = np.full(x1.shape, np.inf if opts.alternative == "less" else z)
    z_upper = np.full(x1.shape, np.inf if opts.alternative == "greater" else z)
    names = np.empty(x1.shape[0], dtype=object)
    for method, idx in method_groups.items():
        names[idx] = _interval_methods(method, opts, n1[idx], n2[idx], x1[idx] + x2[idx])
    lower = np.empty(x1.shape)
    upper = np.empty(x1.shape)
    # A one-sided bound multiplies an infinite critical value by a zero standard error (Wald with rates
    # of 0 or 1); the open side is replaced by the edge of the parameter space afterwards.
    with np.errstate(invalid="ignore"):
        for name, idx in _index_groups(names).items():
            lower[idx], upper[idx] = effect_bounds(
                opts.effect, x1[idx], n1[idx], x2[idx], n2[idx], name, z_lower[idx], z_upper[idx]
            )
    return lower, upper, names.tolist(), confidence


def _exact_test_intervals(x1, n1, x2, n2, method_groups: dict[str, np.ndarray], opts: Options,
                          interval_alpha: float | None):
    """Return the intervals of the exact-test comparisons only (NaN elsewhere), and the confidence.

    When the intervals are not asked for, the warnings still need them where an exact test may disagree
    with its interval; those comparisons are few (exact tests are for small tables).
    """
    lower = np.full(x1.shape, np.nan)
    upper = np.full(x1.shape, np.nan)
    exact_groups = {name: idx for name, idx in method_groups.items() if name in EXACT_METHODS}
    if exact_groups:
        sel = np.sort(np.concatenate(list(exact_groups.values())))
        sub_groups = {name: np.searchsorted(sel, idx) for name, idx in exact_groups.items()}
        lower[sel], upper[sel], _, _ = _test_intervals(
            x1[sel], n1[sel], x2[sel], n2[sel], sub_groups, opts, interval_alpha)
    return lower, upper, 1.0 - (opts.alpha if interval_alpha is None else interval_alpha)


def _interval_methods(method: str, opts: Options, n1, n2, successes):
    """Return the interval method reported with ``method`` for each comparison (a str or an object array)."""
    if method in ("z-pooled", "chi-square"):
        # The Farrington-Manning score statistic at no effect is the pooled z statistic, so this
        # interval excludes the null exactly when the (uncorrected) test rejects.
        return "farrington-manning"
    if method == "z-unpooled":
        return "wald-cc" if opts.continuity_correction else "wald"
    if method == "fisher-exact" and opts.effect == "odds-ratio":
        small_margin = np.minimum(successes, n1 + n2 - successes) <= MAX_TRIALS_CONDITIONAL_EXACT
        return np.where(small_margin, "conditional-exact", "miettinen-nurminen").astype(object)
    return "miettinen-nurminen"


def _warnings(opts: Options, methods: np.ndarray, groups: dict[str, np.ndarray], x1, x2, min_expected, stat,
              p) -> list[tuple[str, ...]]:
    """Return the cautions of each comparison (a shared empty tuple where there are none).

    A caution that can apply to a table with every count strictly inside must be added to ``_one_values``
    too (tests/unit/test_single_comparison_path.py fails until it is).
    """
    size = methods.shape[0]
    normal = _is_one_of(groups, ("z-pooled", "z-unpooled", "chi-square", "score"), size)
    pooled = _is_one_of(groups, ("z-pooled", "chi-square"), size)
    no_stat = np.isnan(stat)
    small = normal & (min_expected < EXPECTED_COUNT_THRESHOLD)
    same_outcome = no_stat & pooled
    wald_undefined = no_stat & _is_one_of(groups, ("z-unpooled",), size)
    if opts.effect == "ratio":
        no_lift = x2 == 0
    else:
        no_lift = (x2 == 0) & (x1 > 0)
    uncorrected = pooled if opts.continuity_correction else np.zeros(size, dtype=bool)
    underflow = p == 0.0
    flagged = small | same_outcome | wald_undefined | no_lift | uncorrected | underflow
    out: list[tuple[str, ...]] = [()] * size
    for i in np.flatnonzero(flagged).tolist():
        notes = []
        if small[i]:
            notes.append(small_count_note(float(min_expected[i])))
        if same_outcome[i]:
            notes.append(
                "every trial in both groups had the same outcome: the data carry no evidence of a difference"
            )
        if wald_undefined[i]:
            notes.append(
                "the unpooled standard error is 0 (each rate is 0 or 1), so the Wald test is undefined; use score "
                "or an exact test"
            )
        if no_lift[i]:
            notes.append("the relative lift is undefined: the control group has no successes")
        if uncorrected[i]:
            notes.append(_UNCORRECTED_NOTE)
        if underflow[i]:
            notes.append(_UNDERFLOW_NOTE)
        out[i] = tuple(notes)
    return out


def _add_interval_warnings(warnings, opts: Options, methods, groups, x1, n1, x2, n2, lower, upper, p):
    """Add the cautions about the reported interval and undefined estimates to each comparison's warnings.

    Like :func:`_warnings`: one that can apply with every count strictly inside belongs in ``_one_values`` too.

    An exact test is reported with a score (or conditional) interval that does not invert it, so near the
    significance boundary the two can disagree; where they do, the warning says that the test decides.
    """
    null = opts.null_value
    with np.errstate(invalid="ignore"):
        excludes = (lower > null) | (upper < null)
    rejects = p <= opts.alpha
    exact_methods = _is_one_of(groups, EXACT_METHODS, methods.shape[0])
    disagree = exact_methods & ~np.isnan(p) & (excludes != rejects)
    undefined_or = (opts.effect == "odds-ratio") & (((x1 == 0) | (x1 == n1)) & ((x2 == 0) | (x2 == n2)))
    unbounded_or = (opts.effect == "odds-ratio") & ~undefined_or & ((x2 == 0) | (x1 == n1))
    no_success = (opts.effect != "ratio") & (x1 == 0) & (x2 == 0)
    out = list(warnings)
    for i in np.flatnonzero(disagree | undefined_or | unbounded_or | no_success).tolist():
        notes = list(out[i])
        if disagree[i]:
            notes.append(
                f"{METHOD_NAMES[methods[i]]} and the reported interval disagree on this table (the interval "
                "does not invert an exact test); the test's p-value decides"
            )
        if undefined_or[i]:
            notes.append("the odds ratio is undefined: each group's trials all had the same outcome")
        if unbounded_or[i]:
            notes.append("the odds ratio is unbounded: the control has no successes or the treatment no failures")
        if no_success[i]:
            notes.append("the relative lift is undefined: neither group has a success")
        out[i] = tuple(notes)
    return out


def _format_effect(effect: str, value: float | None, signed: bool = True) -> str:
    if value is None:
        return "unbounded"
    if effect == "difference":
        pts = 100.0 * value
        return f"{pts:+.2f}" if signed else f"{pts:.2f}"
    return significant_digits(value)


def _summaries(opts: Options, confidence: float, methods, treatment_rates, control_rates, differences, lifts,
               odds_ratios, lowers, uppers, p_values, log10_p_values, rejects) -> list[str]:
    """Return the one-sentence summary of each comparison."""
    conf, show, no_show = _summary_frame(opts, confidence)
    effect = opts.effect
    if effect == "difference":
        effect_texts = [f"a difference of {100.0 * d:+.2f} percentage points" for d in differences]
        unit = " points"
    elif effect == "ratio":
        effect_texts = ["a ratio of " + ("undefined" if lift is None else significant_digits(lift + 1.0))
                        for lift in lifts]
        unit = ""
    else:
        effect_texts = ["an odds ratio of " + ("undefined" if o is None else significant_digits(o))
                        for o in odds_ratios]
        unit = ""
    if effect == "difference":
        # _format_effect, inlined: this runs once or twice per comparison of a batch.
        lower_texts = ["unbounded" if lo is None else f"{100.0 * lo:+.2f}" for lo in lowers]
        upper_texts = ["unbounded" if hi is None else f"{100.0 * hi:+.2f}" for hi in uppers]
    else:
        lower_texts = [_format_effect(effect, lo) for lo in lowers]
        upper_texts = [_format_effect(effect, hi) for hi in uppers]
    if opts.alternative == "greater":
        bounds = [f"{conf} lower bound {lo}{unit}" for lo in lower_texts]
    elif opts.alternative == "less":
        bounds = [f"{conf} upper bound {hi}{unit}" for hi in upper_texts]
    else:
        bounds = [f"{conf} CI {lo} to {hi}{unit}" for lo, hi in zip(lower_texts, upper_texts, strict=True)]
    out = []
    for method, tr, cr, effect_text, bound, p, log10p, reject in zip(
        methods, treatment_rates, control_rates, effect_texts, bounds, p_values, log10_p_values, rejects,
        strict=True,
    ):
        name = METHOD_NAMES[method]
        if p is None:
            verdict = f"the {name} is undefined for these counts"
        else:
            verdict = f"p = {_format_p(p, log10p)}, {show if reject else no_show}"
        out.append(
            f"Treatment {100.0 * tr:.2f}% vs control {100.0 * cr:.2f}%: {effect_text} ({bound}); {verdict} ({name})."
        )
    return out


@lru_cache(maxsize=256)
def _summary_frame(opts: Options, confidence: float) -> tuple[str, str, str]:
    """The words of a summary that depend on the options alone, worked out once per set of options.

    ``(confidence level, "so the data show ... at the ... level", "so the data do not show ...")``.
    """
    null_text = _null_text(opts.effect, opts.alternative, opts.null_value)
    level = _level(opts.alpha)
    return (_level(confidence), f"so the data show {null_text} at the {level} level",
            f"so the data do not show {null_text} at the {level} level")


def _level(fraction: float) -> str:
    """Format 0.95 as "95%" and 0.975 as "97.5%"."""
    return percent(fraction, 0 if abs(fraction * 100 - round(fraction * 100)) < 1e-9 else 1)


def _null_text(effect: str, alternative: str, null_value: float) -> str:
    name = {"difference": "difference", "ratio": "ratio", "odds-ratio": "odds ratio"}[effect]
    no_effect = null_value == score.NO_EFFECT[effect]
    value = f"{100 * null_value:+g} percentage points" if effect == "difference" else f"{null_value:g}"
    if alternative == "two-sided":
        return "a difference between the rates" if no_effect else f"a {name} other than {value}"
    word = "higher" if alternative == "greater" else "lower"
    if no_effect:
        return f"a {word} treatment rate"
    return f"a {name} {'above' if alternative == 'greater' else 'below'} {value}"


def _format_p(p: float, log10p: float | None) -> str:
    if p >= 0.001:
        return f"{p:.3g}"
    if p > 0:
        return f"{p:.2e}"
    return f"10^{log10p:.1f}" if log10p is not None else "0"
