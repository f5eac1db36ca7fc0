"""Shared schema pieces: strict base schema, groups, common fields, error flattening."""

from __future__ import annotations

from typing import Any

from marshmallow import RAISE, Schema, ValidationError, fields, validate, validates_schema

from ..fields import Count, Number, Text
from ..stats._common import ALTERNATIVES, MAX_TRIALS

MAX_LABEL_LENGTH = 200


def flatten_errors(messages: Any, prefix: str = "") -> dict[str, list[str]]:
    """Turn marshmallow's nested error dict into ``{"a.b.c": [messages]}``."""
    flat: dict[str, list[str]] = {}
    if isinstance(messages, dict):
        for key, value in messages.items():
            path = str(key) if key != "_schema" else ""
            full = ".".join(part for part in (prefix, path) if part)
            for sub, msgs in flatten_errors(value, full).items():
                flat.setdefault(sub, []).extend(msgs)
    elif isinstance(messages, list) and all(isinstance(m, str) for m in messages):
        flat[prefix or "body"] = list(messages)
    elif isinstance(messages, list):
        for msgs in messages:
            for sub, items in flatten_errors(msgs, prefix).items():
                flat.setdefault(sub, []).extend(items)
    else:
        flat[prefix or "body"] = [str(messages)]
    return flat


class StrictSchema(Schema):
    class Meta:
        unknown = RAISE


def raise_for(exc: ValueError, candidates: tuple[str, ...], default: str) -> None:
    """Re-raise a core ValueError as a ValidationError on the field its message names first."""
    message = str(exc)
    field = next((name for name in candidates if name in message), default)
    raise ValidationError(message, field_name=field) from exc


# ------------------------------------------------------------------------------------------------
# Shared pieces


class GroupSchema(StrictSchema):
    """Successes out of trials for one group."""

    successes = Count(required=True, validate=validate.Range(min=0, max=MAX_TRIALS),
                      metadata={"description": "Number of successes, 0 <= successes <= trials."})
    trials = Count(required=True, validate=validate.Range(min=1, max=MAX_TRIALS),
                   metadata={"description": "Number of trials, 1 to 10^12."})
    label = Text(validate=validate.Length(max=MAX_LABEL_LENGTH), metadata={"description": "Optional name."})

    @validates_schema
    def _successes_within_trials(self, data, **kwargs):
        if "successes" in data and "trials" in data and data["successes"] > data["trials"]:
            raise ValidationError("must not exceed trials", field_name="successes")


def alpha_field():
    return Number(load_default=0.05, validate=validate.Range(min=0, max=0.5, min_inclusive=False),
                  metadata={"description": "Significance level in (0, 0.5]."})


def alternative_field():
    return Text(load_default="two-sided", validate=validate.OneOf(ALTERNATIVES),
                metadata={"description": "two-sided (default), greater (H1: effect > null value) or less."})


class ProblemSchema(Schema):
    """RFC 9457 problem details."""

    type = fields.String()
    title = fields.String()
    status = fields.Integer()
    detail = fields.String()
    errors = fields.Dict(keys=fields.String(), values=fields.List(fields.String()),
                         metadata={"description": "Dotted field path -> messages."})
    request_id = fields.String()


class HealthSchema(Schema):
    status = fields.String()
    version = fields.String()
