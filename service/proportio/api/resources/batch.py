"""POST /v1/batch: many two-group tests in one request, with a multiplicity adjustment."""

from __future__ import annotations

from flask import Blueprint, Response

from ... import operations
from ...operations.batch import max_batch, max_batch_exact
from ...schemas import BatchRequestSchema, BatchResponseSchema
from ..registry import operation

bp = Blueprint("batch", __name__)

# Read once at start-up so that a malformed PROPORTIO_MAX_BATCH* value stops the app instead of a request.
max_batch()
max_batch_exact()

EXAMPLE = {
    "comparisons": [
        {"control": {"successes": 412, "trials": 9630}, "treatment": {"successes": 471, "trials": 9598}},
        {"control": {"successes": 1210, "trials": 9630}, "treatment": {"successes": 1175, "trials": 9598}},
        {"control": {"successes": 38, "trials": 9630}, "treatment": {"successes": 31, "trials": 9598},
         "alternative": "less"},
    ],
    "adjustment": "holm",
}


@operation(bp, "/v1/batch", tag="tests", request=BatchRequestSchema, response=BatchResponseSchema, example=EXAMPLE)
def create_batch(data: dict):
    """Run many two-group tests at once.

    Each item of `comparisons` is exactly a /v1/tests request and each answer exactly the /v1/tests answer
    (same numbers to the last bit) plus `adjusted_p_value` and `adjusted_reject_null`, in request order.
    The p-values are adjusted across the comparisons of the request with `adjustment`. Limits: at most
    100,000 comparisons by default (`PROPORTIO_MAX_BATCH`) within the body limit (`PROPORTIO_MAX_BODY_BYTES`,
    32 MiB by default, about 110 bytes per comparison without labels); at most 1,000 exact-test comparisons
    (`PROPORTIO_MAX_BATCH_EXACT`; `auto` counts where it picks an exact test) scanning at most 20,000,000 table
    cells with Boschloo's or Barnard's test; at most 200 distinct sets of options. Larger requests get a
    413 or 422 problem that suggests splitting them. An invalid comparison makes the whole request a 422
    whose `errors` name it by index (`comparisons.17.treatment.successes`); at most 50 are listed.

    For large batches, send `columns` instead of `comparisons`: the four counts as lists (one element per
    comparison, about 30 bytes per comparison) and one set of /v1/tests options for all of them. The answer
    is then `columns` (one list per field, the same values as the items of `results`) and `options`;
    `fields` picks the columns to return, and what is left out is not computed. A bad count is named by
    position (`columns.treatment.successes.17`).
    """
    if "columns" in data:
        answer = BatchResponseSchema().dump(operations.run_batch_columns(data))
        return Response(operations.columns_json(answer), mimetype="application/json")
    return Response(operations.batch_json(data), mimetype="application/json")

