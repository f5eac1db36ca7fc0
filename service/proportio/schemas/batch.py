"""Schemas of /v1/batch: many /v1/tests requests in one body.

TestRequestSchema stays the single definition of a comparison: the OpenAPI document shows it as the item
of ``comparisons``, and every rule the column loader below applies is read from it (field names, choices,
ranges, defaults). Loading 100,000 items one by one through marshmallow would take seconds, so the
loader checks the same rules column-wise with numpy; the few items it finds at fault go through
TestRequestSchema itself, so the error paths and messages are exactly those of a single /v1/tests call
(``comparisons.17.treatment.successes``). tests/api/test_batch_endpoint.py checks that the two agree on
a catalogue of bad items.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import repeat
from operator import itemgetter
from typing import Any

import numpy as np
from marshmallow import Schema, ValidationError, fields, validate

from ..fields import Count, Flag, Number, Text
from ..operations.batch import (
    DEFAULT_MAX_BATCH,
    OPTION_NAMES,
    ComparisonColumns,
    columns_from_items,
    group_indices,
    max_batch,
)
from ..stats import multiplicity, twogroup
from .base import GroupSchema, StrictSchema
from .twogroup import TestRequestSchema, TestResponseSchema

# At most this many invalid comparisons are described in one error answer.
MAX_LISTED_ERRORS = 50
_MISSING = object()


# ------------------------------------------------------------------------------------------------
# The rules of one comparison, read from TestRequestSchema and GroupSchema


@dataclass(frozen=True)
class _Rules:
    top_keys: frozenset
    group_keys: frozenset
    required_groups: tuple[str, ...]
    successes_range: tuple[int, int]
    trials_range: tuple[int, int]
    label_max: int
    choices: dict[str, frozenset]  # Text options with OneOf
    flags: tuple[str, ...]
    numbers: dict[str, tuple[float, float, bool, bool] | None]  # Number options -> Range (or None)
    defaults: dict[str, Any]


def _one(field, kind):
    found = [v for v in field.validators if isinstance(v, kind)]
    return found[0] if len(found) == 1 else None


def _hook_names(schema: type[Schema]) -> set[tuple[str, str]]:
    return {(tag, hook[0]) for tag, hooks in schema._hooks.items() for hook in hooks}


def _derive_rules() -> _Rules | None:
    """Read the rules from the schemas; None when they hold a kind of field this loader does not know."""
    top = TestRequestSchema._declared_fields
    group = GroupSchema._declared_fields
    groups = tuple(name for name, f in top.items() if isinstance(f, fields.Nested))
    if set(group) != {"successes", "trials", "label"} or groups != ("control", "treatment"):
        return None
    if not all(isinstance(top[name], fields.Nested) and top[name].required and top[name].schema.__class__ is GroupSchema
               for name in groups):
        return None
    succ, trials, label = group["successes"], group["trials"], group["label"]
    ranges = [_one(succ, validate.Range), _one(trials, validate.Range)]
    length = _one(label, validate.Length)
    if not (isinstance(succ, Count) and isinstance(trials, Count) and isinstance(label, Text) and all(ranges)
            and length is not None and succ.required and trials.required and not label.required
            and not label.allow_none and all(r.min_inclusive and r.max_inclusive for r in ranges)):
        return None
    choices, flags, numbers, defaults = {}, [], {}, {}
    for name in OPTION_NAMES:
        f = top.get(name)
        if f is None or f.required:
            return None
        defaults[name] = f.load_default
        if isinstance(f, Text) and not f.allow_none and _one(f, validate.OneOf) and len(f.validators) == 1:
            choices[name] = frozenset(_one(f, validate.OneOf).choices)
        elif isinstance(f, Flag) and not f.allow_none and not f.validators:
            flags.append(name)
        elif isinstance(f, Number) and len(f.validators) <= 1:
            r = _one(f, validate.Range)
            if f.validators and r is None:
                return None
            numbers[name] = None if r is None else (r.min, r.max, r.min_inclusive, r.max_inclusive)
        else:
            return None
    if set(top) != set(groups) | set(OPTION_NAMES):
        return None
    # The cross-field rules this loader applies itself: successes <= trials, and twogroup.check_options.
    if (_hook_names(TestRequestSchema) != {("validates_schema", "_consistent")}
            or _hook_names(GroupSchema) != {("validates_schema", "_successes_within_trials")}):
        return None
    return _Rules(
        top_keys=frozenset(top), group_keys=frozenset(group), required_groups=groups,
        successes_range=(ranges[0].min, ranges[0].max), trials_range=(ranges[1].min, ranges[1].max),
        label_max=length.max, choices=choices, flags=tuple(flags), numbers=numbers, defaults=defaults,
    )


RULES = _derive_rules()
_GET_SUCCESSES = itemgetter("successes")
_GET_TRIALS = itemgetter("trials")


def _all_of_type(values: list, kind: type) -> bool:
    return set(map(type, values)) == {kind}


def _group_columns(groups: list, rules: _Rules) -> tuple[np.ndarray, np.ndarray] | None:
    if not _all_of_type(groups, dict) or not all(map(rules.group_keys.issuperset, groups)):
        return None
    try:
        successes = list(map(_GET_SUCCESSES, groups))
        trials = list(map(_GET_TRIALS, groups))
    except KeyError:
        return None
    if not (_all_of_type(successes, int) and _all_of_type(trials, int)):
        return None
    try:
        s = np.array(successes, dtype=np.int64)
        t = np.array(trials, dtype=np.int64)
    except OverflowError:
        return None
    (s_min, s_max), (t_min, t_max) = rules.successes_range, rules.trials_range
    if not (s.min() >= s_min and s.max() <= s_max and t.min() >= t_min and t.max() <= t_max and (s <= t).all()):
        return None
    if max(map(len, groups)) > 2:
        labels = [g["label"] for g in groups if "label" in g]
        if labels and (not _all_of_type(labels, str) or max(map(len, labels)) > rules.label_max):
            return None
    return s, t


def _number_column(values: list, default, allow_none: bool, bounds) -> list | None:
    kinds = set(map(type, values)) - {type(_MISSING)}
    if not kinds <= ({int, float, type(None)} if allow_none else {int, float}):
        return None
    out = [None if v is None else float(v) for v in (default if v is _MISSING else v for v in values)]
    present = [v for v in out if v is not None]
    if not present:
        return out
    arr = np.array(present)
    if not np.isfinite(arr).all():
        return None
    if bounds is not None:
        lo, hi, lo_in, hi_in = bounds
        if lo is not None and not ((arr >= lo).all() if lo_in else (arr > lo).all()):
            return None
        if hi is not None and not ((arr <= hi).all() if hi_in else (arr < hi).all()):
            return None
    return out


def _option_groups(items: list, rules: _Rules) -> tuple[tuple[tuple, np.ndarray], ...] | None:
    """Group the items by their options (defaults filled in), or None when an option breaks a rule."""
    present = set().union(*items)
    constant: dict[str, Any] = {}
    varying: dict[str, list] = {}
    for name in OPTION_NAMES:
        default = rules.defaults[name]
        if name not in present:
            constant[name] = default
            continue
        values = [it.get(name, _MISSING) for it in items]
        if name in rules.choices:
            distinct = set(values)  # raises TypeError on a list or object; the caller treats that as invalid
            distinct.discard(_MISSING)
            if not distinct <= rules.choices[name]:
                return None
            column = [default if v is _MISSING else v for v in values]
        elif name in rules.flags:
            if not set(map(type, values)) - {type(_MISSING)} <= {bool}:
                return None
            column = [default if v is _MISSING else v for v in values]
        else:
            field = TestRequestSchema._declared_fields[name]
            column = _number_column(values, default, field.allow_none, rules.numbers[name])
            if column is None:
                return None
        distinct = set(column)
        if len(distinct) == 1:
            constant[name] = column[0]
        else:
            varying[name] = column
    if not varying:
        return ((tuple(constant[name] for name in OPTION_NAMES), np.arange(len(items))),)
    columns = [varying[name] if name in varying else repeat(constant[name]) for name in OPTION_NAMES]
    return group_indices(list(zip(*columns, strict=False)))  # repeat() is endless; the lists set the length


def _options_valid(key: tuple, cache: dict) -> bool:
    ok = cache.get(key)
    if ok is None:
        try:
            twogroup.check_options(*key)
            ok = True
        except ValueError:
            ok = False
        cache[key] = ok
    return ok


def load_columns(items: list, rules: _Rules | None = RULES) -> ComparisonColumns | None:
    """Return the validated columns of ``items``, or None when any item breaks a rule of TestRequestSchema.

    Every rule is checked on whole columns: the type of every value (a count is a JSON integer, never a
    boolean or a float), ranges, successes <= trials, known fields only, labels, option values and the
    cross-field rules of ``twogroup.check_options`` (once per distinct set of options).
    """
    if rules is None or not items:
        return None
    try:
        if not _all_of_type(items, dict) or not all(map(rules.top_keys.issuperset, items)):
            return None
        counts = []
        for name in ("treatment", "control"):
            column = _group_columns([it[name] for it in items], rules)
            if column is None:
                return None
            counts.extend(column)
        grouped = _option_groups(items, rules)
        if grouped is None:
            return None
        cache: dict = {}
        if not all(_options_valid(key, cache) for key, _ in grouped):
            return None
        # TestRequestSchema also refuses an exact test on groups larger than the method accepts.
        for key, idx in grouped:
            if key[0] in twogroup.EXACT_METHODS:
                largest = np.maximum(counts[1][idx], counts[3][idx]).max()
                try:
                    twogroup.check_exact_size(key[0], largest, largest)
                except ValueError:
                    return None
    except (KeyError, TypeError, OverflowError):
        return None
    return ComparisonColumns(counts[0], counts[1], counts[2], counts[3], grouped)


def invalid_positions(items: list, limit: int, rules: _Rules | None = RULES) -> list[int]:
    """Positions of the first ``limit`` items that :func:`load_columns` refuses, in order.

    Every rule concerns one item alone, so a slice passes exactly when all its items do: the search halves
    failing slices and skips passing ones, which costs about two column checks of the whole list per
    invalid item found.
    """
    found: list[int] = []

    def visit(lo: int, hi: int) -> None:
        if len(found) >= limit:
            return
        if hi - lo <= 16:
            for i in range(lo, hi):
                if len(found) < limit and load_columns([items[i]], rules) is None:
                    found.append(i)
            return
        if load_columns(items[lo:hi], rules) is not None:
            return
        mid = (lo + hi) // 2
        visit(lo, mid)
        visit(mid, hi)

    visit(0, len(items))
    return found


class Comparisons(fields.List):
    """A list of /v1/tests requests, loaded into columns (see the module docstring)."""

    def __init__(self, **kwargs):
        super().__init__(fields.Nested(TestRequestSchema), **kwargs)

    def _deserialize(self, value, attr, data, **kwargs) -> ComparisonColumns:
        if not isinstance(value, list):
            raise ValidationError("must be a list of comparisons (each a /v1/tests request)")
        if not value:
            raise ValidationError("send at least one comparison")
        limit = max_batch()
        if len(value) > limit:
            raise ValidationError(
                f"at most {limit:,} comparisons are accepted in one request, got {len(value):,}: split the work "
                "into several requests")
        columns = load_columns(value)
        if columns is not None:
            return columns
        return self._load_one_by_one(value, attr, data, **kwargs)

    def _load_one_by_one(self, items: list, attr, data, **kwargs) -> ComparisonColumns:
        errors: dict[Any, Any] = {}
        positions = invalid_positions(items, MAX_LISTED_ERRORS) if RULES is not None else range(len(items))
        for i in positions:
            try:
                self.inner.deserialize(items[i], **kwargs)
            except ValidationError as exc:
                errors[i] = exc.messages
            except OverflowError:
                errors[i] = _overflow_errors(items[i])
            if len(errors) >= MAX_LISTED_ERRORS:
                errors["_schema"] = [f"only the first {MAX_LISTED_ERRORS} invalid comparisons are listed"]
                break
        if errors:
            raise ValidationError(errors)
        # The column loader refused a batch that TestRequestSchema accepts (it cannot, by the tests; this keeps
        # the answer right if it ever does): load it item by item.
        try:
            loaded = super()._deserialize(items, attr, data, **kwargs)
        except OverflowError as exc:
            raise ValidationError("a number is too large to be represented") from exc
        return columns_from_items(loaded)


def _overflow_errors(item) -> dict | list:
    """Name the number field that marshmallow could not convert to a float (an integer beyond 1e308)."""
    if isinstance(item, dict):
        for name in OPTION_NAMES:
            value = item.get(name)
            if isinstance(value, int) and not isinstance(value, bool) and not _fits_float(value):
                return {name: ["must be a finite number"]}
    return ["a number is too large to be represented"]


def _fits_float(value: int) -> bool:
    try:
        return math.isfinite(float(value))
    except OverflowError:
        return False


class BatchRequestSchema(StrictSchema):
    """Many two-group tests in one request, with an optional multiplicity adjustment."""

    comparisons = Comparisons(
        required=True, validate=validate.Length(min=1),
        metadata={"description": f"The comparisons, each exactly a /v1/tests request; 1 to {DEFAULT_MAX_BATCH:,} "
                                 "by default (PROPORTIO_MAX_BATCH). Answered in the same order."})
    adjustment = Text(
        load_default="none", validate=validate.OneOf(multiplicity.ADJUSTMENTS),
        metadata={"description": "Multiplicity adjustment of the p-values across the comparisons of this "
                                 "request: none (default), bonferroni, holm, hochberg (family-wise error rate); "
                                 "benjamini-hochberg, benjamini-yekutieli (false discovery rate)."})


class BatchItemSchema(TestResponseSchema):
    """One answer of a batch: the /v1/tests answer plus the adjusted p-value."""

    adjusted_p_value = fields.Float(allow_none=True, metadata={
        "description": "p-value adjusted across the comparisons of the request; null when p_value is null."})
    adjusted_reject_null = fields.Boolean(allow_none=True, metadata={
        "description": "adjusted_p_value <= alpha; null when adjusted_p_value is null."})


class _Results(fields.List):
    """Items built by operations.batch.item_dicts with exactly BatchItemSchema's fields; passed through."""

    def __init__(self, **kwargs):
        super().__init__(fields.Nested(BatchItemSchema), **kwargs)

    def _serialize(self, value, attr, obj, **kwargs):
        return value


class BatchResponseSchema(Schema):
    """The answers of a batch, in request order."""

    results = _Results(metadata={"description": "One answer per comparison, in request order."})
    adjustment = fields.String()
    count = fields.Integer()
    warnings = fields.List(fields.String())
