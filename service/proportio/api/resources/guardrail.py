"""POST /v1/guardrail: a pass / fail / inconclusive verdict for a metric that must not get worse."""

from __future__ import annotations

from flask import Blueprint

from ... import operations
from ...schemas import GuardrailRequestSchema, GuardrailResponseSchema
from ..registry import operation

bp = Blueprint("guardrail", __name__)

EXAMPLE = {
    "metric": "order error rate",
    "control": {"successes": 61, "trials": 9630, "label": "current checkout"},
    "treatment": {"successes": 58, "trials": 9598, "label": "one-page checkout"},
    "margin": 0.2,
    "margin_type": "relative",
    "direction": "lower-is-better",
}


@operation(bp, "/v1/guardrail", tag="guardrail", request=GuardrailRequestSchema, response=GuardrailResponseSchema,
           example=EXAMPLE)
def create_guardrail(data: dict):
    """Decide whether a treatment is no worse than its control by more than a margin.

    `pass` when the non-inferiority score test (Miettinen-Nurminen, one-sided at `alpha`) shows the
    treatment no worse than the control by more than `margin`; `fail` when the opposite one-sided
    test shows it worse by more than the margin (the whole `1 - 2 alpha` interval lies beyond it);
    `inconclusive` otherwise, with an estimate of the additional trials per group that would likely
    settle it. The margin is on the difference (`absolute`) or the ratio (`relative`); `direction`
    says whether higher or lower rates are better.
    """
    return operations.run_guardrail(data)
