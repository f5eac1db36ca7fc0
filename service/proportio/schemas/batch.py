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

import copy
import math
from dataclasses import dataclass
from itertools import repeat
from operator import itemgetter
from typing import Any

import numpy as np
from marshmallow import Schema, ValidationError, fields, post_load, validate, validates_schema

from ..fields import Count, Flag, Number, Text
from ..operations.batch import (
    COLUMN_NAMES,
    DEFAULT_MAX_BATCH,
    OPTION_NAMES,
    ComparisonColumns,
    columns_from_items,
    group_indices,
    max_batch,
)
from ..stats import multiplicity, twogroup
from .base import GroupSchema, StrictSchema
from .twogroup import TestRequestSchema, TestResponseSchema, check_test_options

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


def _check_batch_list(value, not_a_list: str, empty: str) -> None:
    """Raise a ValidationError unless ``value`` is a list of 1 to ``max_batch()`` elements."""
    if not isinstance(value, list):
        raise ValidationError(not_a_list)
    if not value:
        raise ValidationError(empty)
    limit = max_batch()
    if len(value) > limit:
        raise ValidationError(
            f"at most {limit:,} comparisons are accepted in one request, got {len(value):,}: split the work "
            "into several requests")


class Comparisons(fields.List):
    """A list of /v1/tests requests, loaded into columns (see the module docstring)."""

    def __init__(self, **kwargs):
        super().__init__(fields.Nested(TestRequestSchema), **kwargs)

    def _deserialize(self, value, attr, data, **kwargs) -> ComparisonColumns:
        _check_batch_list(value, "must be a list of comparisons (each a /v1/tests request)",
                          "send at least one comparison")
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


# ------------------------------------------------------------------------------------------------
# The columnar form: one list per count, one set of options


class CountColumn(fields.List):
    """A list of counts, one per comparison, loaded into an int64 array.

    Each element follows the rules of ``count`` (a field of GroupSchema); a whole column of JSON integers is
    checked at once, and only a column at fault is gone through element by element for the messages
    (``columns.treatment.successes.17``).
    """

    def __init__(self, count: fields.Field, **kwargs):
        super().__init__(copy.deepcopy(count), **kwargs)
        (self._range,) = [v for v in self.inner.validators if isinstance(v, validate.Range)]

    def _deserialize(self, value, attr, data, **kwargs) -> np.ndarray:
        _check_batch_list(value, "must be a list of counts, one per comparison", "send at least one count")
        if _all_of_type(value, int):
            try:
                column = np.array(value, dtype=np.int64)
            except OverflowError:
                column = None
            if column is not None and column.min() >= self._range.min and column.max() <= self._range.max:
                return column
        errors: dict[Any, Any] = {}
        for i, element in enumerate(value):
            try:
                self.inner.deserialize(element, **kwargs)
            except ValidationError as exc:
                errors[i] = exc.messages
                if len(errors) >= MAX_LISTED_ERRORS:
                    errors["_schema"] = [f"only the first {MAX_LISTED_ERRORS} invalid counts are listed"]
                    break
        raise ValidationError(errors)


def _first_positions(mask: np.ndarray, message: str) -> dict:
    positions = np.flatnonzero(mask)[:MAX_LISTED_ERRORS].tolist()
    return {i: [message] for i in positions}


class CountColumnsSchema(StrictSchema):
    """Successes and trials of one group, one element per comparison."""

    successes = CountColumn(GroupSchema._declared_fields["successes"], required=True, metadata={
        "description": "Successes of each comparison, 0 <= successes <= trials."})
    trials = CountColumn(GroupSchema._declared_fields["trials"], required=True, metadata={
        "description": "Trials of each comparison, 1 to 10^12."})

    @validates_schema
    def _successes_within_trials(self, data, **kwargs):
        if "successes" not in data or "trials" not in data:
            return
        successes, trials = data["successes"], data["trials"]
        if successes.shape != trials.shape:
            raise ValidationError(
                f"holds {successes.shape[0]:,} counts but trials holds {trials.shape[0]:,}: send one of each "
                "per comparison", field_name="successes")
        over = successes > trials
        if over.any():
            raise ValidationError({"successes": _first_positions(over, "must not exceed trials")})


def _option_fields() -> dict[str, fields.Field]:
    """The option fields of TestRequestSchema (copies: a field belongs to one schema)."""
    return {name: copy.deepcopy(TestRequestSchema._declared_fields[name]) for name in OPTION_NAMES}


class ColumnsSchema(StrictSchema.from_dict(_option_fields(), name="_ColumnOptions")):
    """Many comparisons sharing one set of options: a /v1/tests request whose counts are lists.

    The options mean what they mean in /v1/tests and apply to every comparison.
    """

    control = fields.Nested(CountColumnsSchema, required=True)
    treatment = fields.Nested(CountColumnsSchema, required=True)

    @validates_schema
    def _consistent(self, data, **kwargs):
        if "control" in data and "treatment" in data:
            size_c, size_t = data["control"]["trials"].shape[0], data["treatment"]["trials"].shape[0]
            if size_c != size_t:
                raise ValidationError(
                    f"holds {size_t:,} comparisons but control holds {size_c:,}: send one count of each group "
                    "per comparison", field_name="treatment")
        largest = None
        if "control" in data and "treatment" in data:
            largest = int(max(data["control"]["trials"].max(), data["treatment"]["trials"].max()))
        check_test_options(data, largest)

    @post_load
    def _columns(self, data, **kwargs) -> ComparisonColumns:
        key = tuple(data[name] for name in OPTION_NAMES)
        t, c = data["treatment"], data["control"]
        return ComparisonColumns(t["successes"], t["trials"], c["successes"], c["trials"],
                                 ((key, np.arange(t["trials"].shape[0])),))


class BatchRequestSchema(StrictSchema):
    """Many two-group tests in one request, with an optional multiplicity adjustment."""

    comparisons = Comparisons(
        validate=validate.Length(min=1),
        metadata={"description": f"The comparisons, each exactly a /v1/tests request; 1 to {DEFAULT_MAX_BATCH:,} "
                                 "by default (PROPORTIO_MAX_BATCH). Answered in the same order, as `results`. "
                                 "Send this or `columns`."})
    columns = fields.Nested(ColumnsSchema, metadata={
        "description": "The columnar form, for large batches: the comparisons as lists of counts "
                       "(`control.successes`, `control.trials`, `treatment.successes`, `treatment.trials`, one "
                       "element per comparison) sharing one set of /v1/tests options. Answered as `columns`, one "
                       "list per field, in the same order. Send this or `comparisons`."})
    fields_ = fields.List(
        Text(validate=validate.OneOf(COLUMN_NAMES)), data_key="fields", attribute="fields",
        validate=validate.Length(min=1),
        metadata={"description": "With `columns` only: the answer columns to return (default all). Columns "
                                 "left out are not computed: the interval, method_reason and summary cost "
                                 "more than the tests themselves."})
    adjustment = Text(
        load_default="none", validate=validate.OneOf(multiplicity.ADJUSTMENTS),
        metadata={"description": "Multiplicity adjustment of the p-values across the comparisons of this "
                                 "request: none (default), bonferroni, holm, hochberg (family-wise error rate); "
                                 "benjamini-hochberg, benjamini-yekutieli (false discovery rate)."})


    @validates_schema
    def _one_form(self, data, **kwargs):
        if ("comparisons" in data) == ("columns" in data):
            raise ValidationError(
                ("send either comparisons or columns, not both" if "columns" in data else
                 "send comparisons (a list of /v1/tests requests) or columns (lists of counts sharing one set "
                 "of options)"), field_name="comparisons")
        if "fields" in data and "columns" not in data:
            raise ValidationError("fields selects the columns of a columnar answer: send the comparisons as "
                                  "columns, or leave fields out", field_name="fields")


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


class _Column(fields.List):
    """One column of a columnar answer, passed through as built by operations.batch (numpy arrays included).

    The inner field documents the elements in the OpenAPI document; the values were checked when built.
    """

    def _serialize(self, value, attr, obj, **kwargs):
        return value


def _column(inner: fields.Field, description: str) -> _Column:
    return _Column(inner, metadata={"description": description})


class BatchColumnsSchema(Schema):
    """The columns of a columnar batch answer: each a list with one element per comparison, in order.

    Each column holds what the field of the same name holds in a /v1/tests answer (interval_lower and
    interval_upper are interval.lower and interval.upper, the estimate and assumptions fields are flat).
    """

    method = _column(fields.String(), "The method used.")
    method_reason = _column(fields.String(allow_none=True), "Why auto chose it (null for other methods).")
    statistic = _column(fields.Float(allow_none=True), "Test statistic; null when undefined.")
    p_value = _column(fields.Float(allow_none=True), "p-value; null when undefined.")
    log10_p_value = _column(fields.Float(allow_none=True), "log10 of the p-value, finite where p underflows.")
    reject_null = _column(fields.Boolean(allow_none=True), "p_value <= alpha; null when p_value is null.")
    adjusted_p_value = _column(fields.Float(allow_none=True), "p-value adjusted across the comparisons.")
    adjusted_reject_null = _column(fields.Boolean(allow_none=True), "adjusted_p_value <= alpha.")
    continuity_correction = _column(fields.Boolean(), "Whether a continuity correction was applied.")
    control_rate = _column(fields.Float(), "Control successes / trials.")
    treatment_rate = _column(fields.Float(), "Treatment successes / trials.")
    difference = _column(fields.Float(), "treatment rate - control rate")
    relative_lift = _column(fields.Float(allow_none=True), "ratio - 1; null when undefined.")
    odds_ratio = _column(fields.Float(allow_none=True), "null when undefined or unbounded.")
    interval_method = _column(fields.String(), "Interval reported with the test.")
    interval_lower = _column(fields.Float(allow_none=True), "Lower limit; null when unbounded.")
    interval_upper = _column(fields.Float(allow_none=True), "Upper limit; null when unbounded.")
    min_expected_count = _column(fields.Float(), "Smallest expected cell count under the null.")
    normal_approximation_ok = _column(fields.Boolean(), "min_expected_count >= 5.")
    warnings = _column(fields.List(fields.String()), "Cautions of each comparison.")
    summary = _column(fields.String(), "One plain sentence per comparison.")


class BatchOptionsSchema(Schema):
    """The options every comparison of a columnar batch used (null_value resolved to its default)."""

    method = fields.String()
    alternative = fields.String()
    null_value = fields.Float()
    effect = fields.String()
    alpha = fields.Float()
    continuity_correction = fields.Boolean()
    interval_confidence = fields.Float()


class BatchResponseSchema(Schema):
    """The answers of a batch, in request order: `results` for comparisons, `columns` for the columnar form."""

    results = _Results(metadata={"description": "One answer per comparison, in request order (comparisons form)."})
    columns = fields.Nested(BatchColumnsSchema, metadata={
        "description": "One list per answer field asked for, one element per comparison (columnar form)."})
    options = fields.Nested(BatchOptionsSchema, metadata={"description": "The shared options (columnar form)."})
    adjustment = fields.String()
    count = fields.Integer()
    warnings = fields.List(fields.String())
