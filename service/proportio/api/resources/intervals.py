"""POST /v1/intervals: a confidence interval for a proportion or a two-group effect."""

from __future__ import annotations

from flask import Blueprint

from ... import operations
from ...schemas import IntervalRequestSchema, IntervalResponseSchema
from ..registry import operation

bp = Blueprint("intervals", __name__)

EXAMPLE = {
    "effect": "difference",
    "method": "newcombe",
    "control": {"successes": 412, "trials": 9630},
    "treatment": {"successes": 471, "trials": 9598},
    "confidence": 0.95,
}


@operation(bp, "/v1/intervals", tag="intervals", request=IntervalRequestSchema, response=IntervalResponseSchema,
           example=EXAMPLE)
def create_interval(data: dict):
    """Compute a confidence interval.

    For one proportion (`group`) or for the difference, ratio or odds ratio of `treatment` relative to
    `control`. Limits that are unbounded (a ratio whose control has no successes) are null, with a
    warning that says why.
    """
    return operations.run_interval(data)
