"""Schemas of /v1/sample-size: sample size, power or detectable effect, for one plan or a curve of plans."""

from __future__ import annotations

from typing import Any

from marshmallow import Schema, ValidationError, fields, post_load, validate, validates_schema

from ..fields import Count, Flag, Number, Text
from ..stats._common import ALTERNATIVES, MAX_TRIALS
from .base import StrictSchema, alpha_field

DESIGNS = ("superiority", "non-inferiority", "equivalence")
PLAN_METHODS = ("z-pooled", "z-unpooled")
SOLVE_FOR = ("sample-size", "power", "effect")
EFFECT_FIELDS = ("expected_rate", "absolute_effect", "relative_effect")
SWEEP_PARAMETERS = ("n_control", "expected_rate", "absolute_effect", "relative_effect", "power", "alpha",
                    "allocation_ratio")
MAX_SWEEP_VALUES = 200

_OPEN_UNIT = validate.Range(min=0, max=1, min_inclusive=False, max_inclusive=False,
                            error="must be strictly between 0 and 1 (got {input})")
_SIZES = validate.Range(min=1, max=MAX_TRIALS, error="must be between 1 and 10^12 trials (got {input})")


def _given(original: Any, name: str) -> bool:
    """Whether the client sent ``name`` with a value (a JSON null counts as not sent)."""
    return isinstance(original, dict) and original.get(name) is not None


class SampleSizeSweepSchema(StrictSchema):
    """One request field and the values it takes along a curve."""

    parameter = Text(required=True, validate=validate.OneOf(SWEEP_PARAMETERS),
                     metadata={"description": "The request field that varies along the curve; it must not also be "
                                              "given on its own."})
    values = fields.List(
        fields.Raw(error_messages={"null": "must be a number, not null"}, metadata={"type": "number"}), required=True,
        validate=validate.Length(min=1, max=MAX_SWEEP_VALUES, error=f"must hold 1 to {MAX_SWEEP_VALUES} values; "
                                 "split a longer curve into several requests"),
        metadata={"description": f"1 to {MAX_SWEEP_VALUES} values, each checked like the field it stands for "
                                 "(whole numbers for n_control); a bad one is reported as sweep.values.<index>."})


class SampleSizeRequestSchema(StrictSchema):
    """A two-group comparison of rates to plan: solve for the sample size, the power or the detectable effect."""

    baseline_rate = Number(required=True, validate=_OPEN_UNIT,
                           metadata={"description": "Control rate, in (0, 1)."})
    expected_rate = Number(load_default=None, allow_none=True, validate=_OPEN_UNIT,
                           metadata={"description": "Treatment rate expected, in (0, 1). Give exactly one of "
                                                    "expected_rate, absolute_effect, relative_effect (none when "
                                                    "solve_for is effect)."})
    absolute_effect = Number(load_default=None, allow_none=True,
                             validate=validate.Range(min=-1, max=1, min_inclusive=False, max_inclusive=False,
                                                     error="must be strictly between -1 and 1 (got {input})"),
                             metadata={"description": "expected_rate - baseline_rate."})
    relative_effect = Number(load_default=None, allow_none=True, validate=validate.Range(min=-1, min_inclusive=False,
                                                     error="must be greater than -1 (got {input})"),
                             metadata={"description": "expected_rate / baseline_rate - 1 (0.1 is a 10% lift)."})
    alpha = alpha_field()
    power = Number(load_default=0.8, validate=_OPEN_UNIT,
                   metadata={"description": "Target power in (0, 1), above alpha; not used when solve_for is power."})
    alternative = Text(load_default="two-sided", validate=validate.OneOf(ALTERNATIVES),
                       metadata={"description": "superiority: two-sided (alpha split over both sides), greater or "
                                                "less (one-sided). non-inferiority: greater (higher rates are "
                                                "better; two-sided is read as greater, with a warning) or less "
                                                "(lower rates are better). equivalence: two-sided only."})
    allocation_ratio = Number(load_default=1.0, validate=validate.Range(min=0, min_inclusive=False,
                                                      error="must be greater than 0 (got {input})"),
                              metadata={"description": "n_treatment / n_control, > 0. With n_control alone, "
                                                       "n_treatment = ceil(allocation_ratio * n_control)."})
    design = Text(load_default="superiority", validate=validate.OneOf(DESIGNS),
                  metadata={"description": "superiority (H0: equal rates), non-inferiority (one-sided test against "
                                           "the margin) or equivalence (two one-sided tests against +/- margin)."})
    margin = Number(load_default=None, allow_none=True, validate=_OPEN_UNIT,
                    metadata={"description": "Margin on the difference of rates, in (0, 1); required for "
                                             "non-inferiority and equivalence, not accepted for superiority."})
    method = Text(load_default="z-pooled", validate=validate.OneOf(PLAN_METHODS),
                  metadata={"description": "Variance of the test under the null: z-pooled (pooled rate; restricted "
                                           "maximum-likelihood rates, Farrington-Manning, for a non-zero margin) "
                                           "or z-unpooled."})
    continuity_correction = Flag(load_default=False,
                                 metadata={"description": "Apply the Fleiss continuity correction."})
    solve_for = Text(load_default="sample-size", validate=validate.OneOf(SOLVE_FOR),
                     metadata={"description": "sample-size (needs an effect), power (needs an effect and sizes) "
                                              "or effect (needs sizes)."})
    n_control = Count(load_default=None, allow_none=True, validate=_SIZES,
                      metadata={"description": "Control trials, 1 to 10^12; required when solve_for is power or "
                                               "effect."})
    n_treatment = Count(load_default=None, allow_none=True, validate=_SIZES,
                        metadata={"description": "Treatment trials, 1 to 10^12; default "
                                                 "ceil(allocation_ratio * n_control)."})
    sweep = fields.Nested(SampleSizeSweepSchema, load_default=None, allow_none=True,
                          metadata={"description": "Ask for a curve: one plan per value of sweep.parameter, "
                                                   "answered in curve."})

    @validates_schema(pass_original=True)
    def _consistent(self, data: dict, original: Any, **kwargs) -> None:
        errors: dict[str, Any] = {}

        def add(name: str, message: str) -> None:
            errors.setdefault(name, []).append(message)

        sweep = data.get("sweep")
        swept = sweep["parameter"] if sweep else None
        solve_for = data["solve_for"]
        design = data["design"]

        # The swept field takes its values from the sweep only.
        if swept is not None and _given(original, swept):
            add(swept, f"given by sweep.values (sweep.parameter is {swept}); drop it here")

        # Exactly one effect, unless it is solved for.
        effects = [name for name in EFFECT_FIELDS if data.get(name) is not None]
        if swept in EFFECT_FIELDS:
            for name in effects:
                if name != swept:
                    add(name, f"the sweep gives the effect (sweep.parameter is {swept}); drop {name}")
        elif len(effects) > 1:
            for name in effects:
                add(name, "give only one of expected_rate, absolute_effect, relative_effect (got "
                    + ", ".join(effects) + ")")
        has_effect = bool(effects) or swept in EFFECT_FIELDS
        if solve_for == "effect":
            for name in effects:
                add(name, f'{name} is solved for when solve_for is "effect"; drop it or set solve_for to '
                          '"sample-size" or "power"')
            if swept in EFFECT_FIELDS:
                add("sweep.parameter", f'{swept} is solved for when solve_for is "effect"; sweep n_control, '
                                       "power, alpha or allocation_ratio instead")
        elif not has_effect:
            add("expected_rate", f'solve_for "{solve_for}" needs the effect: give exactly one of expected_rate, '
                                 "absolute_effect, relative_effect")

        # The margin belongs to the non-inferiority and equivalence designs.
        if design == "superiority" and data.get("margin") is not None:
            add("margin", 'applies only to design "non-inferiority" or "equivalence"; drop margin or change design')
        elif design != "superiority" and data.get("margin") is None:
            add("margin", f'required when design is "{design}": the largest difference of rates that still counts '
                          'as ' + ("no worse" if design == "non-inferiority" else "equivalent") + ", e.g. 0.01")
        if design == "equivalence" and data["alternative"] != "two-sided":
            add("alternative", 'design "equivalence" uses two one-sided tests; alternative must be "two-sided"')

        # Sizes are given exactly when they are not solved for.
        if solve_for == "sample-size":
            for name in ("n_control", "n_treatment"):
                if data.get(name) is not None:
                    add(name, f'{name} is solved for when solve_for is "sample-size"; drop it or set solve_for to '
                              '"power" or "effect"')
            if swept == "n_control":
                add("sweep.parameter", 'n_control is solved for when solve_for is "sample-size"; set solve_for to '
                                       '"power" or "effect" to sweep it')
        elif data.get("n_control") is None and swept != "n_control":
            add("n_control", f'required when solve_for is "{solve_for}": the control group\'s trials (and '
                             "n_treatment, or allocation_ratio)")
        if swept == "allocation_ratio" and data.get("n_treatment") is not None:
            add("n_treatment", "not used when sweeping allocation_ratio: n_treatment is "
                               "ceil(allocation_ratio * n_control); drop it")

        if solve_for == "power":
            if swept == "power":
                add("sweep.parameter", 'power is what solve_for "power" computes; sweep n_control or an effect '
                                       "instead")
        elif swept not in ("power", "alpha") and data["power"] <= data["alpha"]:
            add("power", f"must be greater than alpha ({data['alpha']!r})")

        if sweep is not None:
            field = self.fields[swept]
            for i, value in enumerate(sweep["values"]):
                try:
                    field.deserialize(value)
                except ValidationError as exc:
                    errors.setdefault("sweep", {}).setdefault("values", {})[i] = exc.messages

        if errors:
            nested = {}
            for key, value in errors.items():
                if key == "sweep.parameter":
                    nested.setdefault("sweep", {})["parameter"] = value
                else:
                    nested[key] = value
            raise ValidationError(nested)

    @post_load
    def _typed_sweep_values(self, data: dict, **kwargs) -> dict:
        sweep = data.get("sweep")
        if sweep:
            field = self.fields[sweep["parameter"]]
            sweep["values"] = [field.deserialize(value) for value in sweep["values"]]
        return data


class SampleSizePointSchema(Schema):
    """One plan: the sizes, the power they reach, the effect and the design echoed."""

    n_control = fields.Integer(metadata={"description": "Control trials (solved, rounded up, or as given)."})
    n_treatment = fields.Integer(metadata={"description": "Treatment trials."})
    n_total = fields.Integer(metadata={"description": "n_control + n_treatment."})
    power = fields.Float(metadata={"description": "Power achieved at these sizes (both tails of a two-sided "
                                                  "superiority test); never below target_power when solving for "
                                                  "the size or the effect."})
    baseline_rate = fields.Float()
    expected_rate = fields.Float(metadata={"description": "Treatment rate (given, or the detectable one)."})
    absolute_effect = fields.Float(metadata={"description": "expected_rate - baseline_rate."})
    relative_effect = fields.Float(metadata={"description": "expected_rate / baseline_rate - 1."})
    alpha = fields.Float(metadata={"description": "Significance level (per one-sided test for non-inferiority and "
                                                  "equivalence)."})
    target_power = fields.Float(allow_none=True, metadata={"description": "Power asked for; null when solving "
                                                                          "for power."})
    alternative = fields.String(metadata={"description": "The alternative tested (greater for a non-inferiority "
                                                         "request sent as two-sided)."})
    allocation_ratio = fields.Float(metadata={"description": "n_treatment / n_control (as requested when solving "
                                                             "for the size, from the sizes otherwise)."})
    design = fields.String()
    margin = fields.Float(allow_none=True, metadata={"description": "null for superiority."})
    method = fields.String()
    continuity_correction = fields.Boolean()
    solve_for = fields.String()
    formula = fields.String(metadata={"description": "Short name of the formula used and its source."})
    summary = fields.String(metadata={"description": "One plain sentence."})
    warnings = fields.List(fields.String())


class SampleSizeSweepEchoSchema(Schema):
    parameter = fields.String()
    values = fields.List(fields.Raw(metadata={"type": "number"}))


class SampleSizeResponseSchema(SampleSizePointSchema):
    """One plan; or, for a request with sweep, the sweep echoed, the curve, a summary and shared warnings."""

    sweep = fields.Nested(SampleSizeSweepEchoSchema, metadata={"description": "Only with a sweep: the request's "
                                                                              "sweep."})
    curve = fields.List(fields.Nested(SampleSizePointSchema),
                        metadata={"description": "Only with a sweep: one plan per value, in order, each with the "
                                                 "fields of a single answer. The answer then has only sweep, "
                                                 "curve, summary and warnings (those every point shares)."})
