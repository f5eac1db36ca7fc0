"""Operations of /v1/tests and /v1/intervals."""

from __future__ import annotations

from ..stats import intervals, twogroup


def run_tests(items: list[dict]) -> list[twogroup.TestResult]:
    """Run validated test requests, one vectorised core call per distinct set of options."""
    groups: dict[tuple, list[int]] = {}
    for i, item in enumerate(items):
        key = (item["method"], item["alternative"], item["null_value"], item["effect"], item["alpha"],
               item["continuity_correction"])
        groups.setdefault(key, []).append(i)
    results: list[twogroup.TestResult | None] = [None] * len(items)
    for key, idx in groups.items():
        method, alternative, null_value, effect, alpha, cc = key
        out = twogroup.compare(
            [items[i]["treatment"]["successes"] for i in idx], [items[i]["treatment"]["trials"] for i in idx],
            [items[i]["control"]["successes"] for i in idx], [items[i]["control"]["trials"] for i in idx],
            method=method, alternative=alternative, null_value=null_value, effect=effect, alpha=alpha,
            continuity_correction=cc,
        )
        for i, res in zip(idx, out, strict=True):
            results[i] = res
    return results  # type: ignore[return-value]


def run_test(data: dict) -> twogroup.TestResult:
    """Run one validated /v1/tests request (a batch of one)."""
    return run_tests([data])[0]


def run_interval(data: dict) -> intervals.Interval:
    """Run one validated /v1/intervals request."""
    if data["effect"] == "proportion":
        g = data["group"]
        return intervals.interval("proportion", data["method"], data["confidence"],
                                  successes=g["successes"], trials=g["trials"])
    t, c = data["treatment"], data["control"]
    return intervals.interval(data["effect"], data["method"], data["confidence"],
                              treatment=(t["successes"], t["trials"]), control=(c["successes"], c["trials"]))
