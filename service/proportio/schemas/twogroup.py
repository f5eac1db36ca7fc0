"""Schemas of /v1/tests and /v1/intervals."""

from __future__ import annotations

from marshmallow import Schema, ValidationError, fields, validate, validates_schema

from ..fields import Flag, Number, Text
from ..stats import intervals, twogroup
from .base import GroupSchema, StrictSchema, alpha_field, alternative_field, raise_for

# ------------------------------------------------------------------------------------------------
# /v1/tests


class TestRequestSchema(StrictSchema):
    """Two groups and the test to run on them."""

    control = fields.Nested(GroupSchema, required=True)
    treatment = fields.Nested(GroupSchema, required=True)
    method = Text(load_default="auto", validate=validate.OneOf(twogroup.METHODS),
                  metadata={"description": "Test; auto picks one from the expected counts and says why."})
    alternative = alternative_field()
    null_value = Number(load_default=None, allow_none=True,
                        metadata={"description": "Effect under the null on the scale of effect; default no "
                                                 "effect (0 for a difference, 1 for a ratio or odds ratio)."})
    effect = Text(load_default="difference", validate=validate.OneOf(twogroup.EFFECTS),
                  metadata={"description": "Scale of the null value and of the interval."})
    alpha = alpha_field()
    continuity_correction = Flag(load_default=False,
                                 metadata={"description": "Continuity-correct the z-tests (Yates for chi-square)."})

    @validates_schema
    def _consistent(self, data, **kwargs):
        largest = None
        if "control" in data and "treatment" in data:
            largest = max(data["control"]["trials"], data["treatment"]["trials"])
        check_test_options(data, largest)


def check_test_options(data: dict, largest_trials: int | None) -> None:
    """Raise a ValidationError on the option of a /v1/tests request that breaks a rule of the core.

    ``largest_trials`` is the largest group of the request (None when the groups are invalid): an exact
    test refuses groups above its limit.
    """
    try:
        twogroup.check_options(
            data.get("method", "auto"), data.get("alternative", "two-sided"), data.get("null_value"),
            data.get("effect", "difference"), data.get("alpha", 0.05), data.get("continuity_correction", False),
        )
    except ValueError as exc:
        raise_for(exc, ("null_value", "continuity_correction", "alternative", "effect", "alpha", "method"),
                  "method")
    method = data.get("method", "auto")
    if method in twogroup.EXACT_METHODS and largest_trials is not None:
        try:
            twogroup.check_exact_size(method, largest_trials, largest_trials)
        except ValueError as exc:
            raise ValidationError(str(exc), field_name="method") from exc


class EstimateSchema(Schema):
    control_rate = fields.Float()
    treatment_rate = fields.Float()
    difference = fields.Float(metadata={"description": "treatment rate - control rate"})
    relative_lift = fields.Float(allow_none=True, metadata={"description": "ratio - 1; null when undefined"})
    odds_ratio = fields.Float(allow_none=True, metadata={"description": "null when undefined or unbounded"})


class TestIntervalSchema(Schema):
    method = fields.String()
    confidence = fields.Float()
    lower = fields.Float(allow_none=True, metadata={"description": "null when unbounded"})
    upper = fields.Float(allow_none=True, metadata={"description": "null when unbounded"})


class AssumptionsSchema(Schema):
    min_expected_count = fields.Float()
    threshold = fields.Float()
    normal_approximation_ok = fields.Boolean()


class TestResponseSchema(Schema):
    """The outcome of a test."""

    method = fields.String(metadata={"description": "The method used."})
    method_reason = fields.String(allow_none=True, metadata={"description": "Why auto chose it."})
    statistic = fields.Float(allow_none=True)
    p_value = fields.Float(allow_none=True)
    log10_p_value = fields.Float(allow_none=True, metadata={"description": "Finite where p underflows to 0."})
    alpha = fields.Float()
    reject_null = fields.Boolean(allow_none=True)
    alternative = fields.String()
    null_value = fields.Float()
    effect = fields.String()
    continuity_correction = fields.Boolean()
    estimate = fields.Nested(EstimateSchema)
    interval = fields.Nested(TestIntervalSchema)
    assumptions = fields.Nested(AssumptionsSchema)
    warnings = fields.List(fields.String())
    summary = fields.String()


# ------------------------------------------------------------------------------------------------
# /v1/intervals

ALL_INTERVAL_METHODS = tuple(dict.fromkeys(m for ms in intervals.METHODS.values() for m in ms))


class IntervalRequestSchema(StrictSchema):
    """An effect, its data and the interval method."""

    effect = Text(load_default="difference", validate=validate.OneOf(tuple(intervals.METHODS)))
    control = fields.Nested(GroupSchema)
    treatment = fields.Nested(GroupSchema)
    group = fields.Nested(GroupSchema, metadata={"description": "The single group of effect=proportion."})
    method = Text(load_default=None, allow_none=True, validate=validate.OneOf(ALL_INTERVAL_METHODS),
                  metadata={"description": "Default: newcombe (difference), miettinen-nurminen (ratio, "
                                           "odds-ratio), wilson (proportion)."})
    confidence = Number(load_default=0.95, validate=validate.Range(min=0, max=1, min_inclusive=False,
                                                                   max_inclusive=False))

    @validates_schema
    def _shape(self, data, **kwargs):
        effect = data.get("effect", "difference")
        if effect == "proportion":
            if "group" not in data:
                raise ValidationError("required when effect is proportion", field_name="group")
            for name in ("control", "treatment"):
                if name in data:
                    raise ValidationError("not used when effect is proportion; send group", field_name=name)
        else:
            for name in ("control", "treatment"):
                if name not in data:
                    raise ValidationError(f"required when effect is {effect}", field_name=name)
            if "group" in data:
                raise ValidationError("only used when effect is proportion", field_name="group")
        method = data.get("method")
        if method is not None and method not in intervals.METHODS.get(effect, ()):
            raise ValidationError(
                f'"{method}" is not an interval for effect {effect}; use one of: '
                + ", ".join(intervals.METHODS[effect]), field_name="method")


class IntervalResponseSchema(Schema):
    effect = fields.String()
    method = fields.String()
    confidence = fields.Float()
    estimate = fields.Float(allow_none=True, metadata={"description": "null when undefined"})
    lower = fields.Float(allow_none=True, metadata={"description": "null when unbounded"})
    upper = fields.Float(allow_none=True, metadata={"description": "null when unbounded"})
    warnings = fields.List(fields.String())
