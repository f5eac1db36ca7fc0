"""Schemas of /v1/guardrail."""

from __future__ import annotations

from marshmallow import Schema, ValidationError, fields, validate, validates_schema

from ..fields import Number, Text
from ..stats import guardrail
from .base import MAX_LABEL_LENGTH, GroupSchema, StrictSchema, alpha_field
from .twogroup import EstimateSchema


class GuardrailRequestSchema(StrictSchema):
    """Two groups, the tolerated margin and which way is better."""

    control = fields.Nested(GroupSchema, required=True)
    treatment = fields.Nested(GroupSchema, required=True)
    margin = Number(required=True, metadata={
        "description": "Largest tolerated deterioration, > 0: a difference of rates (absolute, below 1) or a "
                       "fraction of the control rate (relative; below 1 when higher is better)."})
    margin_type = Text(load_default="absolute", validate=validate.OneOf(guardrail.MARGIN_TYPES), metadata={
        "description": "absolute (default): margin on p_t - p_c; relative: margin on p_t / p_c."})
    direction = Text(load_default="higher-is-better", validate=validate.OneOf(guardrail.DIRECTIONS), metadata={
        "description": "higher-is-better (default; a success rate) or lower-is-better (an error or crash rate)."})
    alpha = alpha_field()
    metric = Text(load_default=None, allow_none=True, validate=validate.Length(max=MAX_LABEL_LENGTH),
                  metadata={"description": "Optional name of the metric, used in the summary."})

    @validates_schema
    def _margin_fits(self, data, **kwargs):
        if "margin" not in data:
            return
        margin_type = data.get("margin_type", "absolute")
        direction = data.get("direction", "higher-is-better")
        if margin_type not in guardrail.MARGIN_TYPES or direction not in guardrail.DIRECTIONS:
            return  # reported on their own fields
        try:
            guardrail.check_margin(data["margin"], margin_type, direction)
        except ValueError as exc:
            raise ValidationError(str(exc), field_name="margin") from exc


class GuardrailTestSchema(Schema):
    method = fields.String(metadata={"description": "score: the Miettinen-Nurminen score test at the margin."})
    effect = fields.String(metadata={"description": "difference (absolute margin) or ratio (relative margin)."})
    null_value = fields.Float(metadata={"description": "The margin on the scale of effect (for example -0.005 or "
                                                       "1.1)."})
    alternative = fields.String(metadata={"description": "H1 of the non-inferiority test: greater when higher is "
                                                         "better, less when lower is better."})
    statistic = fields.Float(allow_none=True, metadata={"description": "Score statistic at null_value; null when "
                                                                      "infinite."})
    p_value = fields.Float(metadata={"description": "Non-inferiority test (H1: no worse than the margin)."})
    inferiority_p_value = fields.Float(metadata={"description": "The opposite one-sided test (H1: worse than the "
                                                                "margin); 1 - p_value."})


class GuardrailIntervalSchema(Schema):
    method = fields.String()
    effect = fields.String()
    confidence = fields.Float(metadata={"description": "1 - 2 alpha: each end is a one-sided 1 - alpha bound."})
    lower = fields.Float(allow_none=True, metadata={"description": "null when unbounded"})
    upper = fields.Float(allow_none=True, metadata={"description": "null when unbounded"})


class GuardrailResponseSchema(Schema):
    """The verdict on one guarded metric."""

    verdict = fields.String(metadata={"description": "pass (shown no worse than the margin), fail (shown worse "
                                                     "than the margin) or inconclusive."})
    metric = fields.String(allow_none=True)
    test = fields.Nested(GuardrailTestSchema)
    interval = fields.Nested(GuardrailIntervalSchema)
    estimate = fields.Nested(EstimateSchema)
    margin = fields.Float()
    margin_type = fields.String()
    direction = fields.String()
    alpha = fields.Float()
    additional_trials_per_group = fields.Integer(allow_none=True, metadata={
        "description": "When inconclusive: more trials per group that would likely settle it (power 0.8 at the "
                       "observed rates); null otherwise or when not computable (a warning says why)."})
    summary = fields.String()
    warnings = fields.List(fields.String())
