"""POST /v1/sample-size: sample size, power or minimum detectable effect for comparing two rates."""

from __future__ import annotations

from flask import Blueprint

from ... import operations
from ...schemas import SampleSizeRequestSchema, SampleSizeResponseSchema
from ..registry import operation

bp = Blueprint("planning", __name__)

EXAMPLE = {
    "baseline_rate": 0.043,
    "expected_rate": 0.049,
    "power": 0.8,
    "alpha": 0.05,
}


@operation(bp, "/v1/sample-size", tag="planning", request=SampleSizeRequestSchema,
           response=SampleSizeResponseSchema, example=EXAMPLE)
def create_sample_size(data: dict):
    """Plan a comparison of two rates: the sample size, the power or the minimum detectable effect.

    Give the control rate (`baseline_rate`) and, unless `solve_for` is `effect`, exactly one of
    `expected_rate`, `absolute_effect` or `relative_effect`; give `n_control` (and `n_treatment` or
    `allocation_ratio`) when `solve_for` is `power` or `effect`. Designs: `superiority` (the default),
    `non-inferiority` and `equivalence` (both with a `margin` on the difference of rates). Sizes are rounded
    up to whole trials and the reported `power` is the one reached at those sizes; no plan needs more than
    10^12 trials per group. With `sweep` (1 to 200 values of one field) the answer is a `curve` of plans,
    each exactly the single answer for that value.
    """
    return operations.run_sample_size(data)
