"""Strict JSON fields: a count is an integer, a rate is a number, and neither is a string or a boolean."""

from __future__ import annotations

import math

from marshmallow import ValidationError, fields


class Count(fields.Integer):
    """A JSON integer: floats (even 5.0), strings and booleans are refused."""

    def __init__(self, **kwargs):
        super().__init__(strict=True, **kwargs)

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, int):
            raise ValidationError("must be a whole number (a JSON integer), not " + _kind(value))
        return value


class Number(fields.Float):
    """A finite JSON number; strings, booleans, NaN and Infinity are refused."""

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ValidationError("must be a number, not " + _kind(value))
        try:
            value = float(value)
        except OverflowError:
            raise ValidationError("must be a finite number (this one is too large to represent)") from None
        if not math.isfinite(value):
            raise ValidationError("must be a finite number")
        return value


class Flag(fields.Boolean):
    """A JSON boolean only (no "yes", 1 or "true")."""

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, bool):
            raise ValidationError("must be true or false, not " + _kind(value))
        return value


class Text(fields.String):
    """A JSON string only."""

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, str):
            raise ValidationError("must be a string, not " + _kind(value))
        return value


def _kind(value) -> str:
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, float):
        return f"a decimal number ({value!r})"
    if isinstance(value, str):
        return "a string"
    if value is None:
        return "null"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "an object"
    return type(value).__name__
