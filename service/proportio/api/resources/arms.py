"""POST /v1/arms: several arms, an omnibus test and adjusted pairwise comparisons."""

from __future__ import annotations

from flask import Blueprint

from ... import operations
from ...schemas import ArmsRequestSchema, ArmsResponseSchema
from ..registry import operation

bp = Blueprint("arms", __name__)

EXAMPLE = {
    "groups": [
        {"label": "current checkout", "successes": 412, "trials": 9630},
        {"label": "one-page checkout", "successes": 471, "trials": 9598},
        {"label": "express checkout", "successes": 455, "trials": 9611},
    ],
    "control": "current checkout",
    "comparisons": "vs-control",
    "adjustment": "holm",
}


@operation(bp, "/v1/arms", tag="tests", request=ArmsRequestSchema, response=ArmsResponseSchema, example=EXAMPLE)
def compare_arms(data: dict):
    """Compare several arms: an omnibus test and adjusted pairwise comparisons.

    The omnibus test is Pearson's chi-square test of homogeneity (do all the arms share one success rate?).
    Each pair is tested exactly as /v1/tests would, then the p-values are adjusted across the pairs
    (`adjustment`, default holm). By default the pairwise intervals are Bonferroni-adjusted for simultaneous
    coverage: with m pairs each interval has confidence 1 - alpha/m, so that all of them cover together with
    probability at least 1 - alpha (`interval.simultaneous`, `interval.family_confidence`); send
    `"simultaneous_intervals": false` for the unadjusted intervals of the single test.
    """
    return operations.run_arms(data)
