"""Schemas of /v1/arms: several groups, an omnibus test and pairwise comparisons."""

from __future__ import annotations

from marshmallow import Schema, ValidationError, fields, validate, validates_schema

from ..fields import Flag, Text
from ..stats import multiplicity, twogroup
from .base import MAX_LABEL_LENGTH, GroupSchema, StrictSchema, alpha_field, alternative_field, raise_for
from .batch import BatchItemSchema
from .twogroup import TestIntervalSchema

MIN_ARMS = 2
MAX_ARMS = 50
COMPARISON_SETS = ("vs-control", "all-pairs")


class ArmSchema(GroupSchema):
    """One arm: its label and its successes out of trials."""

    label = Text(required=True, validate=validate.Length(min=1, max=MAX_LABEL_LENGTH),
                 metadata={"description": "Name of the arm, unique within the request."})


class ArmsRequestSchema(StrictSchema):
    """Several arms and how to compare them."""

    groups = fields.List(fields.Nested(ArmSchema), required=True,
                         validate=validate.Length(min=MIN_ARMS, max=MAX_ARMS),
                         metadata={"description": f"The arms, {MIN_ARMS} to {MAX_ARMS}, with unique labels."})
    control = Text(load_default=None, allow_none=True,
                   metadata={"description": "Label of the control arm; default the first group."})
    comparisons = Text(load_default="vs-control", validate=validate.OneOf(COMPARISON_SETS),
                       metadata={"description": "vs-control (default): every other arm against the control; "
                                                "all-pairs: every pair in input order (the control arm is the "
                                                "control of its pairs, otherwise the earlier arm is)."})
    adjustment = Text(load_default="holm", validate=validate.OneOf(multiplicity.ADJUSTMENTS),
                      metadata={"description": "Multiplicity adjustment of the pairwise p-values (default holm)."})
    method = Text(load_default="auto", validate=validate.OneOf(twogroup.METHODS),
                  metadata={"description": "Test of each pair, as in /v1/tests."})
    effect = Text(load_default="difference", validate=validate.OneOf(twogroup.EFFECTS),
                  metadata={"description": "Scale of the pairwise estimates and intervals."})
    alternative = alternative_field()
    alpha = alpha_field()
    simultaneous_intervals = Flag(
        load_default=True,
        metadata={"description": "Bonferroni-adjust the pairwise intervals (each at 1 - alpha/m) so that all m "
                                 "cover together with probability at least 1 - alpha (default true)."})

    @validates_schema
    def _consistent(self, data, **kwargs):
        groups = data.get("groups") or []
        seen: dict[str, int] = {}
        for i, group in enumerate(groups):
            label = group["label"]
            if label in seen:
                raise ValidationError({"groups": {i: {"label": [f"duplicate label; groups.{seen[label]} has it too"]}}})
            seen[label] = i
        control = data.get("control")
        if control is not None and groups and control not in seen:
            raise ValidationError("must be the label of one of the groups", field_name="control")
        try:
            twogroup.check_options(data.get("method", "auto"), data.get("alternative", "two-sided"), None,
                                   data.get("effect", "difference"), data.get("alpha", 0.05), False)
        except ValueError as exc:
            raise_for(exc, ("alternative", "effect", "alpha", "method"), "method")


class OmnibusSchema(Schema):
    """Pearson's chi-square test that every arm has the same success rate."""

    statistic = fields.Float()
    df = fields.Integer()
    p_value = fields.Float(metadata={"description": "May underflow to 0; see log10_p_value."})
    log10_p_value = fields.Float()
    min_expected_count = fields.Float()
    warnings = fields.List(fields.String())


class ArmsIntervalSchema(TestIntervalSchema):
    simultaneous = fields.Boolean(metadata={"description": "True when Bonferroni-adjusted for simultaneous "
                                                           "coverage over all the pairs."})
    family_confidence = fields.Float(metadata={"description": "Coverage of all the intervals together (at "
                                                              "least); equals confidence when not simultaneous."})


class ArmsComparisonSchema(BatchItemSchema):
    """One pair: the /v1/tests answer with the arms named, the adjusted p-value and the (simultaneous) interval."""

    treatment = fields.String(metadata={"description": "Label of the treatment arm of the pair."})
    control = fields.String(metadata={"description": "Label of the control arm of the pair."})
    interval = fields.Nested(ArmsIntervalSchema)


class ArmsResponseSchema(Schema):
    omnibus = fields.Nested(OmnibusSchema)
    comparisons = fields.List(fields.Nested(ArmsComparisonSchema))
    control = fields.String()
    comparison_set = fields.String()
    adjustment = fields.String()
    simultaneous_intervals = fields.Boolean()
    family_confidence = fields.Float()
    warnings = fields.List(fields.String())
    summary = fields.String()
