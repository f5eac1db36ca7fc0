"""Schemas of /v1/allocation-check: does the observed traffic split match the planned one?"""

from __future__ import annotations

from marshmallow import Schema, ValidationError, fields, validate, validates_schema

from ..fields import Count, Number, Text
from .base import MAX_LABEL_LENGTH, StrictSchema

MIN_ARMS = 2
MAX_ARMS = 50
# Counts above 2**53 are not exactly representable in float64 (stats.allocation).
MAX_UNITS = 2**53
DEFAULT_THRESHOLD = 0.001


class AllocationRequestSchema(StrictSchema):
    """Units observed in each arm and the planned split."""

    observed = fields.List(
        Count(validate=validate.Range(min=0, max=MAX_UNITS)), required=True,
        validate=validate.Length(min=MIN_ARMS, max=MAX_ARMS),
        metadata={"description": f"Units (users, sessions) assigned to each arm, {MIN_ARMS} to {MAX_ARMS} arms."})
    expected_weights = fields.List(
        Number(validate=validate.Range(min=0, min_inclusive=False)), load_default=None, allow_none=True,
        metadata={"description": "Planned relative weights, one per arm, positive (they are normalised); "
                                 "default an equal split."})
    threshold = Number(
        load_default=DEFAULT_THRESHOLD, validate=validate.Range(min=0, max=0.5, min_inclusive=False),
        metadata={"description": "A mismatch is declared when the p-value is below this, in (0, 0.5]; default "
                                 "0.001 (common practice in online experimentation, no published source)."})
    labels = fields.List(Text(validate=validate.Length(min=1, max=MAX_LABEL_LENGTH)), load_default=None,
                         allow_none=True, metadata={"description": "Optional names of the arms, unique."})

    @validates_schema
    def _consistent(self, data, **kwargs):
        observed = data.get("observed") or []
        if observed and sum(observed) < 1:
            raise ValidationError("the arms must hold at least one unit in total", field_name="observed")
        if sum(observed) > MAX_UNITS:
            raise ValidationError("the arms must hold at most 2**53 units in total", field_name="observed")
        for name in ("expected_weights", "labels"):
            values = data.get(name)
            if values is not None and len(values) != len(observed):
                raise ValidationError(f"give one per arm: {len(observed)} arms, {len(values)} {name.replace('_', ' ')}",
                                      field_name=name)
        labels = data.get("labels")
        if labels is not None and len(set(labels)) != len(labels):
            raise ValidationError("labels must be unique", field_name="labels")


class ArmAllocationSchema(Schema):
    label = fields.String(allow_none=True)
    observed = fields.Integer()
    expected = fields.Float(metadata={"description": "Units expected under the planned split."})
    observed_share = fields.Float()
    expected_share = fields.Float()
    standardized_residual = fields.Float(metadata={"description": "(observed - expected) / sqrt(expected)."})


class AllocationResponseSchema(Schema):
    """Pearson's chi-square goodness-of-fit test of the split."""

    statistic = fields.Float()
    df = fields.Integer()
    p_value = fields.Float(metadata={"description": "May underflow to 0; see log10_p_value."})
    log10_p_value = fields.Float()
    mismatch = fields.Boolean(metadata={"description": "p_value < threshold: the split is not what was planned."})
    threshold = fields.Float()
    arms = fields.List(fields.Nested(ArmAllocationSchema))
    summary = fields.String()
    warnings = fields.List(fields.String())
