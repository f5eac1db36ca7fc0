"""Operations of /v1/tests and /v1/intervals."""

from __future__ import annotations

from ..errors import field_error
from ..stats import intervals, twogroup
from .batch import OPTION_NAMES, columns_from_items, run_columns


def run_tests(items: list[dict]) -> list[twogroup.TestResult]:
    """Run validated test requests, one vectorised core call per distinct set of options.

    This is the /v1/batch code path (operations.batch.run_columns).
    """
    results: list[twogroup.TestResult | None] = [None] * len(items)
    for idx, columns in run_columns(columns_from_items(items)):
        for i, res in zip(idx.tolist(), twogroup.results_from_columns(columns), strict=True):
            results[i] = res
    return results  # type: ignore[return-value]


def run_test(data: dict) -> twogroup.TestResult:
    """Run one validated /v1/tests request: the numbers of a batch of one, without the batch's bookkeeping."""
    t, c = data["treatment"], data["control"]
    return twogroup.compare_one(t["successes"], t["trials"], c["successes"], c["trials"],
                                **{name: data[name] for name in OPTION_NAMES})


def run_interval(data: dict) -> intervals.Interval:
    """Run one validated /v1/intervals request."""
    if data["effect"] == "proportion":
        g = data["group"]
        return intervals.interval("proportion", data["method"], data["confidence"],
                                  successes=g["successes"], trials=g["trials"])
    t, c = data["treatment"], data["control"]
    try:
        return intervals.interval(data["effect"], data["method"], data["confidence"],
                                  treatment=(t["successes"], t["trials"]), control=(c["successes"], c["trials"]))
    except ValueError as exc:
        # The counts passed the schema, so what the core refuses is the method at this size.
        raise field_error(str(exc), getattr(exc, "field", "method")) from exc
