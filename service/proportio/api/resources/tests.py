"""POST /v1/tests: a hypothesis test for two groups."""

from __future__ import annotations

from flask import Blueprint

from ... import operations
from ...schemas import TestRequestSchema, TestResponseSchema
from ..registry import operation

bp = Blueprint("tests", __name__)

EXAMPLE = {
    "control": {"successes": 412, "trials": 9630, "label": "current checkout"},
    "treatment": {"successes": 471, "trials": 9598, "label": "one-page checkout"},
}


@operation(bp, "/v1/tests", tag="tests", request=TestRequestSchema, response=TestResponseSchema, example=EXAMPLE)
def create_test(data: dict):
    """Test whether two success rates differ.

    Runs the chosen test (or picks one with `auto`, saying why) and reports the statistic, p-value,
    the estimates, the interval that matches the test (same effect, level and sidedness), the
    normal-approximation check and a one-sentence summary.
    """
    return operations.run_test(data)
