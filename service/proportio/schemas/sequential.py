"""Schemas of /v1/sequential/plan, /v1/sequential/analyze and /v1/sequential/always-valid."""

from __future__ import annotations

from marshmallow import Schema, ValidationError, fields, validate, validates_schema

from ..fields import Count, Number, Text
from ..stats import sequential
from ..stats._common import MAX_TRIALS
from .base import GroupSchema, StrictSchema, alpha_field, alternative_field

SPENDING_DESCRIPTION = (
    "Alpha-spending function: obrien-fleming-type (default; spends almost nothing early), pocock-type "
    "(spends evenly), power-family (alpha t^rho, needs rho), hwang-shih-decani (needs gamma)."
)
PLANNING_EFFECTS = ("expected_rate", "absolute_effect", "relative_effect")


def _errors_at(errors: dict, path: tuple, message: str) -> None:
    """Add ``message`` at the nested ``path`` of a marshmallow error dict (list indexes as ints)."""
    node = errors
    for key in path[:-1]:
        child = node.setdefault(key, {})
        if isinstance(child, list):
            # The parent already carries a message of its own: keep it under "_schema", which the
            # flattened error paths report at the parent's own path.
            child = node[key] = {"_schema": child}
        node = child
    node.setdefault(path[-1], []).append(message)


def check_spending(data: dict, prefix: tuple = ()) -> dict:
    """Return errors for rho / gamma that do not fit ``data["spending"]`` (empty when they fit)."""
    errors: dict = {}
    spending = data.get("spending", "obrien-fleming-type")
    rho, gamma = data.get("rho"), data.get("gamma")
    if spending == "power-family" and rho is None:
        _errors_at(errors, (*prefix, "rho"), 'required for spending "power-family" (alpha t^rho, rho > 0)')
    if spending == "hwang-shih-decani" and gamma is None:
        _errors_at(errors, (*prefix, "gamma"),
                   'required for spending "hwang-shih-decani" (any real number; 0 spends linearly, '
                   "negative values spend less early)")
    if spending != "power-family" and rho is not None:
        _errors_at(errors, (*prefix, "rho"), f'applies only to spending "power-family"; omit it for "{spending}"')
    if spending != "hwang-shih-decani" and gamma is not None:
        _errors_at(errors, (*prefix, "gamma"),
                   f'applies only to spending "hwang-shih-decani"; omit it for "{spending}"')
    return errors


def spending_field():
    return Text(load_default="obrien-fleming-type", validate=validate.OneOf(sequential.SPENDING_FUNCTIONS),
                metadata={"description": SPENDING_DESCRIPTION})


def rho_field():
    return Number(load_default=None, allow_none=True, validate=validate.Range(min=0, min_inclusive=False),
                  metadata={"description": 'Exponent rho > 0 of spending "power-family" (3 is close to '
                                           "O'Brien-Fleming-type, 1 spends linearly); only with that spending."})


def gamma_field():
    return Number(load_default=None, allow_none=True,
                  metadata={"description": 'Parameter gamma of spending "hwang-shih-decani" (-4 is close to '
                                           "O'Brien-Fleming-type, 1 to Pocock-type); only with that spending."})


# ------------------------------------------------------------------------------------------------
# /v1/sequential/plan


class FutilitySchema(StrictSchema):
    """A non-binding futility boundary that spends the type II error (1 - power)."""

    spending = Text(required=True, validate=validate.OneOf(sequential.SPENDING_FUNCTIONS),
                    metadata={"description": "Beta-spending function (same families as spending)."})
    rho = rho_field()
    gamma = gamma_field()

    @validates_schema
    def _parameters(self, data, **kwargs):
        errors = check_spending(data)
        if errors:
            raise ValidationError(errors)


class SequentialPlanRequestSchema(StrictSchema):
    """A group-sequential design: when to look, how to spend alpha, optionally how many trials."""

    looks = Count(validate=validate.Range(min=1, max=sequential.MAX_LOOKS),
                  metadata={"description": f"Number of equally spaced looks, 1 to {sequential.MAX_LOOKS} "
                                           "(information fractions k / looks). Give this or "
                                           "information_fractions."})
    information_fractions = fields.List(
        Number(), validate=validate.Length(min=1, max=sequential.MAX_LOOKS),
        metadata={"description": "Strictly increasing fractions of the maximum information in (0, 1] at which "
                                 "to look, at most 50. Give this or looks."})
    alpha = alpha_field()
    alternative = alternative_field()
    spending = spending_field()
    rho = rho_field()
    gamma = gamma_field()
    power = Number(load_default=0.8, validate=validate.Range(min=0, max=1, min_inclusive=False, max_inclusive=False),
                   metadata={"description": "Power (default 0.8) at which the inflation factor, the futility "
                                            "boundary and max_sample_size are computed; above alpha."})
    futility = fields.Nested(FutilitySchema, load_default=None, allow_none=True,
                             metadata={"description": "Optional non-binding futility boundary by beta spending."})
    baseline_rate = Number(validate=validate.Range(min=0, max=1, min_inclusive=False, max_inclusive=False),
                           metadata={"description": "Control rate; with one of expected_rate, absolute_effect, "
                                                    "relative_effect it adds max_sample_size to the answer."})
    expected_rate = Number(validate=validate.Range(min=0, max=1, min_inclusive=False, max_inclusive=False),
                           metadata={"description": "Treatment rate to detect."})
    absolute_effect = Number(validate=validate.Range(min=-1, max=1, min_inclusive=False, max_inclusive=False),
                             metadata={"description": "expected_rate - baseline_rate to detect."})
    relative_effect = Number(validate=validate.Range(min=-1, min_inclusive=False),
                             metadata={"description": "expected_rate / baseline_rate - 1 to detect."})
    allocation_ratio = Number(validate=validate.Range(min=0, min_inclusive=False),
                              metadata={"description": "n_treatment / n_control (default 1); only with "
                                                       "baseline_rate."})

    @validates_schema
    def _consistent(self, data, **kwargs):
        errors: dict = {}
        has_looks, has_fractions = "looks" in data, "information_fractions" in data
        if has_looks and has_fractions:
            for name in ("looks", "information_fractions"):
                errors[name] = ["give either looks or information_fractions, not both"]
        elif not has_looks and not has_fractions:
            errors["looks"] = ["give looks (equally spaced) or information_fractions"]
        for i, t in enumerate(data.get("information_fractions") or ()):
            if not 0.0 < t <= 1.0:
                _errors_at(errors, ("information_fractions", i), f"must lie in (0, 1], got {t!r}")
            elif i > 0 and not t > data["information_fractions"][i - 1]:
                _errors_at(errors, ("information_fractions", i),
                           f"information fractions must be strictly increasing; {t!r} does not exceed the "
                           f"previous {data['information_fractions'][i - 1]!r}")
        errors.update(check_spending(data))
        if not data["power"] > data["alpha"]:
            errors["power"] = [f"must exceed alpha ({data['alpha']!r})"]
        effects = [name for name in PLANNING_EFFECTS if name in data]
        if "baseline_rate" in data:
            if not effects:
                errors["expected_rate"] = ["with baseline_rate give one of expected_rate, absolute_effect, "
                                           "relative_effect"]
            for name in effects[1:]:
                errors[name] = [f"give only one of expected_rate, absolute_effect, relative_effect (got "
                                f"{', '.join(effects)})"]
        else:
            for name in (*effects, *(("allocation_ratio",) if "allocation_ratio" in data else ())):
                errors.setdefault("baseline_rate", []).append(
                    f"required with {name} (the control rate the sample size is planned for)")
        if errors:
            raise ValidationError(errors)


class PlannedLookSchema(Schema):
    information_fraction = fields.Float()
    z_boundary = fields.Float(allow_none=True, metadata={
        "description": "Reject when |z| >= z_boundary (two-sided), z >= z_boundary (greater) or z <= z_boundary "
                       "(less, negative); null when the look spends too little alpha to reject."})
    nominal_p_value = fields.Float(metadata={"description": "Fixed-sample p-value of the boundary (0 if none)."})
    cumulative_alpha = fields.Float(metadata={"description": "Type I error spent up to and including this look."})
    alpha_spent = fields.Float(metadata={"description": "Type I error spent at this look."})
    futility_z = fields.Float(allow_none=True, metadata={
        "description": "Non-binding futility boundary: stop when z <= futility_z (greater), z >= futility_z (less) "
                       "or |z| < futility_z (two-sided); null without futility or when nothing is spent here."})


class FutilityEchoSchema(Schema):
    spending = fields.String()
    rho = fields.Float(allow_none=True)
    gamma = fields.Float(allow_none=True)


class MaxSampleSizeSchema(Schema):
    n_control = fields.Integer(metadata={"description": "Maximum control trials: fixed_n_control x inflation "
                                                        "factor, rounded up."})
    n_treatment = fields.Integer(metadata={"description": "Maximum treatment trials, likewise."})
    n_total = fields.Integer(metadata={"description": "n_control + n_treatment: use it as max_trials of "
                                                      "/v1/sequential/analyze."})
    fixed_n_control = fields.Integer(metadata={"description": "Control trials of a single analysis at the same "
                                                              "alpha and power (the /v1/sample-size answer)."})
    fixed_n_treatment = fields.Integer()
    fixed_n_total = fields.Integer()
    total_trials_at_looks = fields.List(fields.Integer(), metadata={
        "description": "Total trials (both groups) at each look: information fraction x n_total, rounded up."})
    baseline_rate = fields.Float()
    expected_rate = fields.Float()
    absolute_effect = fields.Float()
    relative_effect = fields.Float()
    allocation_ratio = fields.Float()
    formula = fields.String(metadata={"description": "The fixed-sample formula used and its source."})


class SequentialPlanResponseSchema(Schema):
    """Boundaries of a group-sequential design."""

    looks = fields.List(fields.Nested(PlannedLookSchema))
    inflation_factor = fields.Float(metadata={
        "description": "Maximum sample size of the design / fixed-sample size at the same alpha and power."})
    alpha = fields.Float()
    alternative = fields.String()
    spending = fields.String()
    rho = fields.Float(allow_none=True)
    gamma = fields.Float(allow_none=True)
    power = fields.Float()
    futility = fields.Nested(FutilityEchoSchema, allow_none=True)
    max_sample_size = fields.Nested(MaxSampleSizeSchema, allow_none=True,
                                    metadata={"description": "Present when baseline_rate and an effect are given."})
    warnings = fields.List(fields.String())
    summary = fields.String()


# ------------------------------------------------------------------------------------------------
# /v1/sequential/analyze


class LookCountsSchema(StrictSchema):
    """Cumulative counts of both groups at one look."""

    control = fields.Nested(GroupSchema, required=True)
    treatment = fields.Nested(GroupSchema, required=True)


class SequentialAnalyzeRequestSchema(StrictSchema):
    """The cumulative counts at every look so far and the design they are judged by."""

    looks = fields.List(fields.Nested(LookCountsSchema), required=True,
                        validate=validate.Length(min=1, max=sequential.MAX_LOOKS),
                        metadata={"description": "Cumulative counts at each look so far, in order (at most 50). "
                                                 "Counts never decrease and each look adds trials."})
    max_trials = Count(required=True, validate=validate.Range(min=2, max=2 * MAX_TRIALS),
                       metadata={"description": "Planned total trials (both groups) at the final look; a look's "
                                                "information fraction is its total trials / max_trials."})
    alpha = alpha_field()
    alternative = alternative_field()
    spending = spending_field()
    rho = rho_field()
    gamma = gamma_field()

    @validates_schema
    def _cumulative(self, data, **kwargs):
        errors = check_spending(data)
        looks, max_trials = data["looks"], data["max_trials"]
        for i in range(1, len(looks)):
            for g in ("control", "treatment"):
                now, before = looks[i][g], looks[i - 1][g]
                if now["trials"] < before["trials"]:
                    _errors_at(errors, ("looks", i, g, "trials"),
                               f"counts are cumulative: {now['trials']} trials is fewer than the {before['trials']} "
                               f"of the previous look")
                if now["successes"] < before["successes"]:
                    _errors_at(errors, ("looks", i, g, "successes"),
                               f"counts are cumulative: {now['successes']} successes is fewer than the "
                               f"{before['successes']} of the previous look")
                elif now["successes"] - before["successes"] > now["trials"] - before["trials"] >= 0:
                    _errors_at(errors, ("looks", i, g, "successes"),
                               f"counts are cumulative: successes grew by {now['successes'] - before['successes']} "
                               f"but trials only by {now['trials'] - before['trials']}")
            if _total(looks[i]) == _total(looks[i - 1]):
                _errors_at(errors, ("looks", i), "adds no trials to the previous look")
        for i, look in enumerate(looks[:-1]):
            if _total(look) >= max_trials:
                errors.setdefault("max_trials", []).append(
                    f"look {i + 1} (looks.{i}) already has {_total(look)} trials, at least max_trials = "
                    f"{max_trials}, yet more looks follow; the look that reaches max_trials is the final one, so "
                    "give the planned total here")
                break
        if errors:
            raise ValidationError(errors)


def _total(look: dict) -> int:
    return look["control"]["trials"] + look["treatment"]["trials"]


class AnalyzedLookSchema(Schema):
    index = fields.Integer(metadata={"description": "1-based look number."})
    information_fraction = fields.Float(metadata={"description": "Total trials / max_trials, capped at 1."})
    n_control = fields.Integer()
    n_treatment = fields.Integer()
    difference = fields.Float(metadata={"description": "treatment rate - control rate"})
    z = fields.Float(metadata={"description": "Pooled two-sample z for the difference (0 when every trial so far "
                                              "has the same outcome)."})
    z_boundary = fields.Float(allow_none=True, metadata={
        "description": "Efficacy boundary at the information reached (negative for less); null when no alpha "
                       "can be spent this early."})
    nominal_p_value = fields.Float(metadata={"description": "Unadjusted fixed-sample p-value of z; not for "
                                                            "decisions."})
    boundary_p_value = fields.Float(metadata={"description": "Nominal level of the boundary."})
    cumulative_alpha = fields.Float()
    crossed = fields.Boolean()


class SequentialAnalyzeResponseSchema(Schema):
    """The analysis of the looks so far and the decision."""

    looks = fields.List(fields.Nested(AnalyzedLookSchema))
    decision = fields.String(metadata={"description": "continue, reject-null (a boundary was crossed) or "
                                                      "no-difference-detected (the final look did not cross)."})
    stopped_at = fields.Integer(allow_none=True, metadata={"description": "Index of the first crossing look."})
    alpha = fields.Float()
    alternative = fields.String()
    spending = fields.String()
    rho = fields.Float(allow_none=True)
    gamma = fields.Float(allow_none=True)
    max_trials = fields.Integer()
    warnings = fields.List(fields.String())
    summary = fields.String()


# ------------------------------------------------------------------------------------------------
# /v1/sequential/always-valid


class AlwaysValidRequestSchema(StrictSchema):
    """Cumulative counts of both groups, to be checked as often as one likes."""

    control = fields.Nested(GroupSchema, required=True)
    treatment = fields.Nested(GroupSchema, required=True)
    alpha = alpha_field()
    tuning = Number(load_default=None, allow_none=True, validate=validate.Range(min=1, max=MAX_TRIALS),
                    metadata={"description": "Trials per group at which the sequence is tightest, 1 to 10^12 "
                                             f"(default {sequential.DEFAULT_TUNING_TRIALS:g}); pass the planned "
                                             "trials per group. A poor choice costs width, never validity."})
    null_value = Number(load_default=0.0, validate=validate.Range(min=-1, max=1),
                        metadata={"description": "Difference tested by p_value and reject_null (default 0)."})


class AlwaysValidResponseSchema(Schema):
    """An always-valid confidence sequence and p-value for the difference of rates."""

    lower = fields.Float()
    upper = fields.Float()
    estimate = fields.Float(metadata={"description": "treatment rate - control rate"})
    p_value = fields.Float(metadata={"description": "Always-valid p-value for null_value."})
    reject_null = fields.Boolean(metadata={"description": "true exactly when null_value is outside [lower, upper]."})
    alpha = fields.Float()
    null_value = fields.Float()
    tuning = fields.Float()
    z_boundary = fields.Float(metadata={"description": "Half-width of the sequence in standard errors."})
    method = fields.String()
    warnings = fields.List(fields.String())
    summary = fields.String()
