"""Operations of /v1/batch: many two-group tests, one vectorised pass through the core per set of options.

The single /v1/tests call (``operations.twogroup.run_test``) takes ``stats.twogroup.compare_one``, which gives
the numbers of a batch of one without the batch's bookkeeping; an item of a batch and the single call agree
to the last bit (tests/unit/test_single_comparison_path.py).
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import orjson

from ..errors import field_error
from ..stats import exact, multiplicity, twogroup

# Defaults of the cost limits (documented in README.md, Configuration).
DEFAULT_MAX_BATCH = 100_000
DEFAULT_MAX_BATCH_EXACT = 1_000
# Exact unconditional tests (Boschloo, Barnard) scan a table of (n_t + 1)(n_c + 1) outcomes; one at the
# 2,000-per-group ceiling is about 4 million cells (roughly half a second). A batch may spend this many cells.
MAX_BATCH_EXACT_CELLS = 20_000_000
UNCONDITIONAL_EXACT = ("boschloo-exact", "barnard-exact")
# Each distinct set of options is one pass through the core, which costs a few milliseconds however few
# comparisons it holds.
MAX_OPTION_SETS = 200
OPTION_NAMES = ("method", "alternative", "null_value", "effect", "alpha", "continuity_correction")
# Items are serialised this many at a time, so that only one slice of dicts exists at once.
_SERIALISE_SLICE = 5_000


@lru_cache(maxsize=32)
def _parse_limit(name: str, raw: str | None, default: int) -> int:
    if raw is None or raw.strip() == "":
        return default
    try:
        value = int(raw)
    except ValueError as exc:
        raise ValueError(f"{name} must be a whole number, got {raw!r}") from exc
    if value < 1:
        raise ValueError(f"{name} must be at least 1, got {value}")
    return value


def max_batch() -> int:
    """Largest number of comparisons in one request (``PROPORTIO_MAX_BATCH``, default 100,000)."""
    return _parse_limit("PROPORTIO_MAX_BATCH", os.environ.get("PROPORTIO_MAX_BATCH"), DEFAULT_MAX_BATCH)


def max_batch_exact() -> int:
    """Largest number of exact-test comparisons in one request (``PROPORTIO_MAX_BATCH_EXACT``, default 1,000)."""
    return _parse_limit("PROPORTIO_MAX_BATCH_EXACT", os.environ.get("PROPORTIO_MAX_BATCH_EXACT"),
                        DEFAULT_MAX_BATCH_EXACT)


@dataclass(frozen=True)
class ComparisonColumns:
    """Validated /v1/tests requests held as columns: counts as int64 arrays, options grouped.

    ``groups`` lists each distinct set of options (a tuple in the order of ``OPTION_NAMES``) with the
    indices of the comparisons that use it, in order of first appearance.
    """

    treatment_successes: np.ndarray
    treatment_trials: np.ndarray
    control_successes: np.ndarray
    control_trials: np.ndarray
    groups: tuple[tuple[tuple, np.ndarray], ...]

    def __len__(self) -> int:
        return int(self.treatment_successes.shape[0])


def group_indices(keys: list) -> tuple[tuple[tuple, np.ndarray], ...]:
    """Group positions by key, keys in order of first appearance."""
    first = keys[0]
    if all(key == first for key in keys):
        return ((first, np.arange(len(keys))),)
    positions: dict[tuple, list[int]] = {}
    for i, key in enumerate(keys):
        positions.setdefault(key, []).append(i)
    return tuple((key, np.asarray(idx, dtype=np.intp)) for key, idx in positions.items())


def columns_from_items(items: list[dict]) -> ComparisonColumns:
    """Build columns from /v1/tests requests already loaded by TestRequestSchema."""
    return ComparisonColumns(
        treatment_successes=np.array([it["treatment"]["successes"] for it in items], dtype=np.int64),
        treatment_trials=np.array([it["treatment"]["trials"] for it in items], dtype=np.int64),
        control_successes=np.array([it["control"]["successes"] for it in items], dtype=np.int64),
        control_trials=np.array([it["control"]["trials"] for it in items], dtype=np.int64),
        groups=group_indices([tuple(it[name] for name in OPTION_NAMES) for it in items]),
    )


def _counts(cols: ComparisonColumns, idx: np.ndarray):
    if idx.shape[0] == len(cols):
        return cols.treatment_successes, cols.treatment_trials, cols.control_successes, cols.control_trials
    return (cols.treatment_successes[idx], cols.treatment_trials[idx], cols.control_successes[idx],
            cols.control_trials[idx])


def run_columns(cols: ComparisonColumns, interval_alpha: float | None = None
                ) -> list[tuple[np.ndarray, twogroup.TestColumns]]:
    """Run every comparison: one vectorised core call per distinct set of options.

    Returns ``(indices, columns)`` pairs; ``indices`` place each result in request order.
    """
    out = []
    for key, idx in cols.groups:
        options = dict(zip(OPTION_NAMES, key, strict=True))
        out.append((idx, twogroup.compare_columns(*_counts(cols, idx), interval_alpha=interval_alpha, **options)))
    return out


def check_option_sets(cols: ComparisonColumns, field: str = "comparisons") -> None:
    """Raise a ValueError naming ``field`` when ``cols`` uses more distinct sets of options than allowed.

    Each distinct set costs one pass through the core (a few milliseconds whatever its size).
    """
    if len(cols.groups) > MAX_OPTION_SETS:
        raise field_error(
            f"the comparisons use {len(cols.groups):,} distinct combinations of {', '.join(OPTION_NAMES)}; at "
            f"most {MAX_OPTION_SETS} are accepted in one request: split the work into several requests or use "
            "fewer distinct settings", field)


def check_exact_budget(cols: ComparisonColumns, field: str = "comparisons", what: str = "comparisons") -> None:
    """Raise a ValueError naming ``field`` when the exact tests of ``cols`` would cost too much.

    At most ``max_batch_exact()`` comparisons may use an exact test (``auto`` counts as exact where it
    picks one), and the exact unconditional tests together at most ``MAX_BATCH_EXACT_CELLS`` table cells.
    """
    count = 0
    cells = 0
    for key, idx in cols.groups:
        xt, nt, xc, nc = _counts(cols, idx)
        options = twogroup.check_options(*key)
        if options.method not in twogroup.EXACT_METHODS and options.method != "auto":
            continue
        for name, mask in twogroup.exact_test_masks(xt, nt, xc, nc, options).items():
            count += int(np.count_nonzero(mask))
            if name in UNCONDITIONAL_EXACT:
                cells += int(np.sum((nt[mask] + 1).astype(np.float64) * (nc[mask] + 1)))
    limit = max_batch_exact()
    if count > limit:
        raise field_error(
            f"{count:,} {what} need an exact test (auto picks one when an expected count is below "
            f"{twogroup.EXPECTED_COUNT_THRESHOLD:g}); at most {limit:,} are accepted in one request: split the "
            "work into several requests, or send method score or z-pooled for the larger ones", field)
    if cells > MAX_BATCH_EXACT_CELLS:
        raise field_error(
            f"the exact unconditional tests (Boschloo, Barnard) of these {what} would scan {cells:,} table "
            f"cells; at most {MAX_BATCH_EXACT_CELLS:,} are accepted in one request (one table of "
            f"{exact.MAX_TRIALS_PER_GROUP_BOSCHLOO:,} trials per group is about 4 million): split the work into "
            "several requests, or send method fisher-exact or score", field)



# ------------------------------------------------------------------------------------------------
# The batch


@dataclass(frozen=True)
class BatchOutcome:
    """Everything a batch answer holds, before it is written out."""

    parts: list[tuple[np.ndarray, twogroup.TestColumns]]
    adjusted: list[list]  # per part, like its columns: floats, None where the p-value is undefined
    adjustment: str
    count: int
    warnings: list[str]


def compute_batch(data: dict) -> BatchOutcome:
    """Run a validated /v1/batch request and adjust the p-values."""
    cols: ComparisonColumns = data["comparisons"]
    adjustment = data["adjustment"]
    check_option_sets(cols)
    check_exact_budget(cols)
    parts = run_columns(cols)
    p = np.empty(len(cols))
    for idx, part in parts:
        p[idx] = part.p_values
    adjusted, warnings = adjust(p, adjustment)
    per_part = []
    for idx, _ in parts:
        values = adjusted[idx]
        lst = values.tolist()
        for i in np.flatnonzero(np.isnan(values)).tolist():
            lst[i] = None
        per_part.append(lst)
    return BatchOutcome(parts, per_part, adjustment, len(cols), warnings)


def adjust(p: np.ndarray, adjustment: str) -> tuple[np.ndarray, list[str]]:
    """Adjust the defined p-values of ``p`` (NaN stays NaN) and return them with the batch's warnings."""
    defined = ~np.isnan(p)
    adjusted = np.full(p.shape, np.nan)
    adjusted[defined] = multiplicity.adjust_p_values(p[defined], adjustment)
    warnings = []
    undefined = int(p.shape[0] - defined.sum())
    if undefined:
        warnings.append(
            f"{undefined:,} comparison(s) have no p-value (the test is undefined for their counts); they are "
            "left out of the adjustment and their adjusted_p_value is null"
        )
    return adjusted, warnings


def item_dicts(part: twogroup.TestColumns, adjusted: list, start: int = 0, stop: int | None = None) -> list[dict]:
    """Return the JSON objects of items ``start:stop`` of ``part``: the /v1/tests fields plus the adjustment.

    The values are the ones TestResponseSchema dumps for the same results (tests/api/test_batch_endpoint.py
    checks the two agree); building plain dicts here avoids a schema dump per item.
    """
    o = part.options
    alpha, alternative, null_value, effect = o.alpha, o.alternative, o.null_value, o.effect
    confidence = part.interval_confidence
    threshold = twogroup.EXPECTED_COUNT_THRESHOLD
    sl = slice(start, stop)
    return [
        {
            "method": method, "method_reason": reason, "statistic": stat, "p_value": p, "log10_p_value": log10p,
            "alpha": alpha, "reject_null": reject, "alternative": alternative, "null_value": null_value,
            "effect": effect, "continuity_correction": cc,
            "estimate": {"control_rate": cr, "treatment_rate": tr, "difference": diff, "relative_lift": lift,
                         "odds_ratio": odds},
            "interval": {"method": imethod, "confidence": confidence, "lower": lo, "upper": hi},
            "assumptions": {"min_expected_count": min_exp, "threshold": threshold, "normal_approximation_ok": ok},
            "warnings": list(notes), "summary": summary,
            "adjusted_p_value": adj, "adjusted_reject_null": None if adj is None else adj <= alpha,
        }
        for (method, reason, stat, p, log10p, reject, cc, cr, tr, diff, lift, odds, imethod, lo, hi, min_exp, ok,
             notes, summary, adj) in zip(
            part.method[sl], part.method_reason[sl], part.statistic[sl], part.p_value[sl], part.log10_p_value[sl],
            part.reject_null[sl], part.continuity_correction[sl], part.control_rate[sl], part.treatment_rate[sl],
            part.difference[sl], part.relative_lift[sl], part.odds_ratio[sl], part.interval_method[sl],
            part.lower[sl], part.upper[sl], part.min_expected_count[sl], part.normal_approximation_ok[sl],
            part.warnings[sl], part.summary[sl], adjusted[sl], strict=True,
        )
    ]


def _ordered_items(outcome: BatchOutcome, start: int, stop: int) -> list[dict]:
    """Items ``start:stop`` of the answer in request order."""
    adjusted = outcome.adjusted
    if len(outcome.parts) == 1:
        return item_dicts(outcome.parts[0][1], adjusted[0], start, stop)
    items: list = [None] * (stop - start)
    for (idx, part), adj in zip(outcome.parts, adjusted, strict=True):
        # Indices within a group increase, so the part of the group that falls in [start, stop) is one slice.
        first, last = (int(i) for i in np.searchsorted(idx, (start, stop)))
        if first == last:
            continue
        for i, item in zip(idx[first:last].tolist(), item_dicts(part, adj, first, last), strict=True):
            items[i - start] = item
    return items


def run_batch(data: dict) -> dict:
    """Run one validated /v1/batch request and return the answer as a dict (for the CLI and tests)."""
    outcome = compute_batch(data)
    return {"results": _ordered_items(outcome, 0, outcome.count), "adjustment": outcome.adjustment,
            "count": outcome.count, "warnings": outcome.warnings}


def batch_json(data: dict) -> bytes:
    """Run one validated /v1/batch request and return the answer as JSON bytes.

    The same dicts as :func:`run_batch`, serialised with orjson a slice at a time so that only one slice
    of item objects is alive at once.
    """
    outcome = compute_batch(data)
    parts: list = [b'{"results":[']
    for start in range(0, outcome.count, _SERIALISE_SLICE):
        stop = min(start + _SERIALISE_SLICE, outcome.count)
        if start:
            parts.append(b",")
        # A view without the enclosing brackets: the final join is then the only copy.
        parts.append(memoryview(orjson.dumps(_ordered_items(outcome, start, stop)))[1:-1])
    tail = orjson.dumps({"adjustment": outcome.adjustment, "count": outcome.count, "warnings": outcome.warnings})
    parts += [b"],", memoryview(tail)[1:]]
    return b"".join(parts)


# ------------------------------------------------------------------------------------------------
# The columnar form: counts in as columns, answers out as columns


def _nullable(values: np.ndarray, undefined: np.ndarray) -> list:
    out = values.tolist()
    for i in np.flatnonzero(undefined).tolist():
        out[i] = None
    return out


# Each column of a columnar answer: the optional parts of the core it needs (twogroup.OPTIONAL_PARTS) and
# how it is read from the arrays and the adjusted p-values. Numeric columns stay numpy arrays, which the
# JSON encoder writes directly (NaN and infinities as null, exactly where an item holds null).
COLUMNS: dict[str, tuple[frozenset, Callable]] = {
    "method": (frozenset(), lambda a, adj: a.method.tolist()),
    "method_reason": (frozenset({"reason"}), lambda a, adj: a.method_reason),
    "statistic": (frozenset(), lambda a, adj: a.statistic),
    "p_value": (frozenset(), lambda a, adj: a.p_value),
    "log10_p_value": (frozenset(), lambda a, adj: a.log10_p_value),
    "reject_null": (frozenset(), lambda a, adj: a.reject_null_list()),
    "adjusted_p_value": (frozenset(), lambda a, adj: adj),
    "adjusted_reject_null": (frozenset(), lambda a, adj: _nullable(adj <= a.options.alpha, np.isnan(adj))),
    "continuity_correction": (frozenset(), lambda a, adj: a.continuity_correction),
    "control_rate": (frozenset(), lambda a, adj: a.control_rate),
    "treatment_rate": (frozenset(), lambda a, adj: a.treatment_rate),
    "difference": (frozenset(), lambda a, adj: a.difference),
    "relative_lift": (frozenset(), lambda a, adj: a.relative_lift),
    "odds_ratio": (frozenset(), lambda a, adj: a.odds_ratio),
    "interval_method": (frozenset({"interval"}), lambda a, adj: a.interval_method),
    "interval_lower": (frozenset({"interval"}), lambda a, adj: a.lower),
    "interval_upper": (frozenset({"interval"}), lambda a, adj: a.upper),
    "min_expected_count": (frozenset(), lambda a, adj: a.min_expected_count),
    "normal_approximation_ok": (frozenset(), lambda a, adj: a.normal_approximation_ok),
    "warnings": (frozenset(), lambda a, adj: a.warnings),
    "summary": (frozenset({"summary"}), lambda a, adj: a.summary),
}
COLUMN_NAMES = tuple(COLUMNS)


def run_batch_columns(data: dict) -> dict:
    """Run a validated columnar /v1/batch request and return the answer (numeric columns as numpy arrays).

    ``data["columns"]`` holds the counts and one set of options; ``data["fields"]`` (optional) names the
    columns to answer, and only the parts of the core they need are computed.
    """
    cols: ComparisonColumns = data["columns"]
    wanted = tuple(dict.fromkeys(data.get("fields") or COLUMN_NAMES))
    check_exact_budget(cols, field="columns.method")
    ((key, idx),) = cols.groups
    options = dict(zip(OPTION_NAMES, key, strict=True))
    parts = frozenset().union(*(COLUMNS[name][0] for name in wanted))
    arrays = twogroup.compare_arrays(*_counts(cols, idx), parts=parts, **options)
    adjusted, warnings = adjust(arrays.p_value, data["adjustment"])
    if "warnings" not in wanted:
        flagged = len(arrays.warnings) - arrays.warnings.count(())
        if flagged:
            warnings.append(f"{flagged:,} comparison(s) carry warnings of their own; add warnings to fields to "
                            "see them")
    o = arrays.options
    return {
        "columns": {name: COLUMNS[name][1](arrays, adjusted) for name in wanted},
        "options": {"method": options["method"], "alternative": o.alternative, "null_value": o.null_value,
                    "effect": o.effect, "alpha": o.alpha, "continuity_correction": o.continuity_correction,
                    "interval_confidence": arrays.interval_confidence},
        "adjustment": data["adjustment"], "count": len(cols), "warnings": warnings,
    }


def columns_json(answer: dict) -> bytes:
    """Serialise a columnar answer (already dumped through its schema): numpy arrays written directly."""
    return orjson.dumps(answer, option=orjson.OPT_SERIALIZE_NUMPY)
