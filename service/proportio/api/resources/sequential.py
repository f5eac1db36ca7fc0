"""POST /v1/sequential/plan, /v1/sequential/analyze and /v1/sequential/always-valid: monitoring a running comparison."""

from __future__ import annotations

from flask import Blueprint

from ... import operations
from ...schemas import (
    AlwaysValidRequestSchema,
    AlwaysValidResponseSchema,
    SequentialAnalyzeRequestSchema,
    SequentialAnalyzeResponseSchema,
    SequentialPlanRequestSchema,
    SequentialPlanResponseSchema,
)
from ..registry import operation

bp = Blueprint("sequential", __name__)

PLAN_EXAMPLE = {
    "looks": 5,
    "alpha": 0.05,
    "spending": "obrien-fleming-type",
    "baseline_rate": 0.043,
    "expected_rate": 0.049,
    "power": 0.8,
}

ANALYZE_EXAMPLE = {
    "looks": [
        {"control": {"successes": 169, "trials": 3974}, "treatment": {"successes": 192, "trials": 3969}},
        {"control": {"successes": 341, "trials": 7948}, "treatment": {"successes": 389, "trials": 7941}},
        {"control": {"successes": 510, "trials": 11917}, "treatment": {"successes": 588, "trials": 11911}},
    ],
    "max_trials": 39714,
    "spending": "obrien-fleming-type",
}

ALWAYS_VALID_EXAMPLE = {
    "control": {"successes": 510, "trials": 11917},
    "treatment": {"successes": 588, "trials": 11911},
    "tuning": 19857,
}


@operation(bp, "/v1/sequential/plan", tag="sequential", request=SequentialPlanRequestSchema,
           response=SequentialPlanResponseSchema, example=PLAN_EXAMPLE)
def sequential_plan(data: dict):
    """Plan group-sequential boundaries from an alpha-spending function.

    Give `looks` (equally spaced) or `information_fractions`. Each look gets the z boundary that spends
    the spending function's share of `alpha` (Lan & DeMets), its nominal p-value, and with `futility` a
    non-binding futility boundary. `inflation_factor` is the maximum sample size relative to a single
    analysis; with `baseline_rate` and an effect, `max_sample_size` gives the trials per group. Where
    such a plan governs a clinical trial, fix the boundaries before any data are seen: the monitoring
    plan belongs to the trial's statisticians and its data monitoring committee.
    """
    return operations.run_sequential_plan(data)


@operation(bp, "/v1/sequential/analyze", tag="sequential", request=SequentialAnalyzeRequestSchema,
           response=SequentialAnalyzeResponseSchema, example=ANALYZE_EXAMPLE)
def sequential_analyze(data: dict):
    """Judge the cumulative counts of every look so far against spending-function boundaries.

    Send all looks so far (cumulative counts, in order) and the planned total `max_trials`; the
    boundaries are recomputed at the information actually reached. The decision is `reject-null` at
    the first crossing, `no-difference-detected` when the look that reaches `max_trials` does not
    cross, otherwise `continue`. The design (alpha, spending) must be the one fixed in advance.
    """
    return operations.run_sequential_analyze(data)


@operation(bp, "/v1/sequential/always-valid", tag="sequential", request=AlwaysValidRequestSchema,
           response=AlwaysValidResponseSchema, example=ALWAYS_VALID_EXAMPLE)
def always_valid(data: dict):
    """Compute an always-valid confidence sequence and p-value for the difference of rates.

    Valid however often it is checked, with no schedule of looks: the chance that it ever excludes the
    true difference is at most `alpha`. `tuning` (default 1000 trials per group) is where it is
    tightest; pass the planned trials per group.
    """
    return operations.run_always_valid(data)
