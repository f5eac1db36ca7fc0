"""POST /v1/allocation-check: does the observed traffic split match the planned one (sample-ratio mismatch)?"""

from __future__ import annotations

from flask import Blueprint

from ... import operations
from ...schemas import AllocationRequestSchema, AllocationResponseSchema
from ..registry import operation

bp = Blueprint("allocation", __name__)

EXAMPLE = {"observed": [50_421, 49_087], "expected_weights": [1, 1], "labels": ["current checkout",
                                                                            "one-page checkout"]}


@operation(bp, "/v1/allocation-check", tag="tests", request=AllocationRequestSchema,
           response=AllocationResponseSchema, example=EXAMPLE)
def allocation_check(data: dict):
    """Check the traffic split of an experiment (sample-ratio mismatch).

    Pearson's chi-square goodness-of-fit test of the units observed in each arm against the planned
    shares. A mismatch (p-value below `threshold`, default 0.001) means the assignment or the logging is
    broken somewhere, so the experiment's other results should not be trusted until the cause is found.
    The 0.001 default is common practice in online experimentation (no published source): the check runs
    on every experiment, and a false alarm stops a sound readout.
    """
    return operations.run_allocation_check(data)
