"""A catalogue of hostile and broken requests across every endpoint: exact status, problem naming the field.

tests/api/test_bad_requests.py covers the basic cases of /v1/tests and /v1/intervals; nothing here repeats
them. Each case is (name, path, body, status, field): a dict body is sent as JSON, a str or bytes body
as is with Content-Type application/json.
"""

from __future__ import annotations

import json

import pytest

from proportio.api import create_app

G = {"successes": 40, "trials": 1000}
T = {"successes": 55, "trials": 1000}
TWO = {"control": G, "treatment": T}
RAW_TWO = '{"control": {"successes": 4, "trials": 10}, "treatment": {"successes": 5, "trials": 10}'


def nested(depth: int) -> str:
    return "[" * depth + "]" * depth


CASES = [
    # /v1/tests: numbers that are not counts, JSON that is not JSON, shapes that are not objects
    ("tests: fractional trials", "/v1/tests", {"control": G, "treatment": {"successes": 55, "trials": 1000.5}},
     422, "treatment.trials"),
    ("tests: exponent-notation count", "/v1/tests", RAW_TWO.replace('"trials": 10}', '"trials": 1e3}', 1) + "}",
     422, "control.trials"),
    ("tests: -10^30 successes", "/v1/tests", {"control": {"successes": -10**30, "trials": 10}, "treatment": T}, 422,
     "control.successes"),
    ("tests: 2^64 counts", "/v1/tests", {"control": {"successes": 2**64, "trials": 2**64}, "treatment": T}, 422,
     "control.trials"),
    ("tests: count inside a list", "/v1/tests", {"control": G, "treatment": {"successes": [1], "trials": 10}}, 422,
     "treatment.successes"),
    ("tests: null_value as string", "/v1/tests", {**TWO, "null_value": "0"}, 422, "null_value"),
    ("tests: label as number", "/v1/tests", {"control": {**G, "label": 5}, "treatment": T}, 422, "control.label"),
    ("tests: label null", "/v1/tests", {"control": {**G, "label": None}, "treatment": T}, 422, "control.label"),
    ("tests: method null", "/v1/tests", {**TWO, "method": None}, 422, "method"),
    ("tests: alpha overflowing to infinity", "/v1/tests", RAW_TWO + ', "alpha": 1e309}', 422, "alpha"),
    ("tests: NaN as a count", "/v1/tests", RAW_TWO.replace('"successes": 4', '"successes": NaN') + "}", 400, "body"),
    ("tests: -Infinity null value", "/v1/tests", RAW_TWO + ', "null_value": -Infinity}', 400, "body"),
    ("tests: trailing brace", "/v1/tests", RAW_TWO + "}}", 400, "body"),
    ("tests: truncated mid-number", "/v1/tests", RAW_TWO[:40], 400, "body"),
    ("tests: single-quoted JSON", "/v1/tests", RAW_TWO.replace('"', "'") + "}", 400, "body"),
    ("tests: invalid UTF-8", "/v1/tests", b'{"control": {"label": "\xff\xfe"}}', 400, "body"),
    ("tests: body is a number", "/v1/tests", "42", 422, "body"),
    ("tests: body is null", "/v1/tests", "null", 422, "body"),
    ("tests: empty object", "/v1/tests", {}, 422, "treatment"),
    ("tests: 40 levels under a field", "/v1/tests", '{"control": ' + nested(40) + ', "treatment": {}}', 422,
     "control"),
    ("tests: 2,000 levels", "/v1/tests", nested(2000), 422, "body"),
    ("tests: 5,000 nested objects", "/v1/tests", '{"a":' * 5000 + "1" + "}" * 5000, 422, "body"),
    # /v1/intervals
    ("intervals: NaN confidence", "/v1/intervals",
     '{"effect": "proportion", "group": {"successes": 3, "trials": 10}, "confidence": NaN}', 400, "body"),
    ("intervals: boolean confidence", "/v1/intervals",
     {"effect": "proportion", "group": {"successes": 3, "trials": 10}, "confidence": True}, 422, "confidence"),
    ("intervals: negative confidence", "/v1/intervals",
     {"effect": "proportion", "group": {"successes": 3, "trials": 10}, "confidence": -0.95}, 422, "confidence"),
    ("intervals: group successes above trials", "/v1/intervals",
     {"effect": "proportion", "group": {"successes": 11, "trials": 10}}, 422, "group.successes"),
    ("intervals: group without trials", "/v1/intervals", {"effect": "proportion", "group": {"successes": 1}}, 422,
     "group.trials"),
    ("intervals: method as number", "/v1/intervals",
     {"effect": "proportion", "group": {"successes": 1, "trials": 3}, "method": 3}, 422, "method"),
    # /v1/sample-size
    ("sample-size: no baseline", "/v1/sample-size", {"expected_rate": 0.05}, 422, "baseline_rate"),
    ("sample-size: baseline 0", "/v1/sample-size", {"baseline_rate": 0, "expected_rate": 0.05}, 422,
     "baseline_rate"),
    ("sample-size: baseline 1.5", "/v1/sample-size", {"baseline_rate": 1.5, "expected_rate": 0.05}, 422,
     "baseline_rate"),
    ("sample-size: two effects", "/v1/sample-size",
     {"baseline_rate": 0.04, "expected_rate": 0.05, "absolute_effect": 0.01}, 422, "absolute_effect"),
    ("sample-size: no effect", "/v1/sample-size", {"baseline_rate": 0.04}, 422, "expected_rate"),
    ("sample-size: power 1", "/v1/sample-size", {"baseline_rate": 0.04, "expected_rate": 0.05, "power": 1}, 422,
     "power"),
    ("sample-size: allocation 0", "/v1/sample-size",
     {"baseline_rate": 0.04, "expected_rate": 0.05, "allocation_ratio": 0}, 422, "allocation_ratio"),
    ("sample-size: non-inferiority without margin", "/v1/sample-size",
     {"baseline_rate": 0.04, "expected_rate": 0.04, "design": "non-inferiority"}, 422, "margin"),
    ("sample-size: power without n", "/v1/sample-size",
     {"baseline_rate": 0.04, "expected_rate": 0.05, "solve_for": "power"}, 422, "n_control"),
    ("sample-size: fractional n", "/v1/sample-size",
     {"baseline_rate": 0.04, "expected_rate": 0.05, "solve_for": "power", "n_control": 100.5}, 422, "n_control"),
    ("sample-size: empty sweep", "/v1/sample-size",
     {"baseline_rate": 0.04, "sweep": {"parameter": "expected_rate", "values": []}}, 422, "sweep.values"),
    ("sample-size: relative effect -1", "/v1/sample-size", {"baseline_rate": 0.04, "relative_effect": -1}, 422,
     "relative_effect"),
    # /v1/sequential/*
    ("plan: zero looks", "/v1/sequential/plan", {"looks": 0}, 422, "looks"),
    ("plan: 51 looks", "/v1/sequential/plan", {"looks": 51}, 422, "looks"),
    ("plan: boolean looks", "/v1/sequential/plan", {"looks": True}, 422, "looks"),
    ("plan: decreasing fractions", "/v1/sequential/plan", {"information_fractions": [0.5, 0.3, 1.0]}, 422,
     "information_fractions.1"),
    ("plan: unknown spending", "/v1/sequential/plan", {"looks": 3, "spending": "linear"}, 422, "spending"),
    ("plan: power family without rho", "/v1/sequential/plan", {"looks": 3, "spending": "power-family"}, 422, "rho"),
    ("plan: looks and fractions", "/v1/sequential/plan", {"looks": 3, "information_fractions": [0.5, 1.0]}, 422,
     "information_fractions"),
    ("analyze: no looks", "/v1/sequential/analyze", {"looks": [], "max_trials": 1000}, 422, "looks"),
    ("analyze: max_trials 1", "/v1/sequential/analyze", {"looks": [TWO], "max_trials": 1}, 422, "max_trials"),
    ("analyze: counts going down", "/v1/sequential/analyze",
     {"looks": [TWO, {"control": {"successes": 20, "trials": 500}, "treatment": T}], "max_trials": 5000}, 422,
     "looks.1.control.trials"),
    ("analyze: look without control", "/v1/sequential/analyze", {"looks": [{"treatment": T}], "max_trials": 5000},
     422, "looks.0.control"),
    ("always-valid: tuning below 1", "/v1/sequential/always-valid", {**TWO, "tuning": 0.5}, 422, "tuning"),
    ("always-valid: null value 2", "/v1/sequential/always-valid", {**TWO, "null_value": 2}, 422, "null_value"),
    ("always-valid: no treatment", "/v1/sequential/always-valid", {"control": G}, 422, "treatment"),
    # /v1/batch
    ("batch: no comparisons", "/v1/batch", {"comparisons": []}, 422, "comparisons"),
    ("batch: one bad item", "/v1/batch",
     {"comparisons": [TWO, {"control": G, "treatment": {"successes": 1001, "trials": 1000}}]}, 422,
     "comparisons.1.treatment.successes"),
    ("batch: object instead of list", "/v1/batch", {"comparisons": TWO}, 422, "comparisons"),
    ("batch: unknown adjustment", "/v1/batch", {"comparisons": [TWO], "adjustment": "sidak"}, 422, "adjustment"),
    ("batch: unknown field in an item", "/v1/batch", {"comparisons": [{**TWO, "colour": 1}]}, 422,
     "comparisons.0.colour"),
    ("batch: 40 levels in an item", "/v1/batch", '{"comparisons": [{"control": ' + nested(40) + "}]}", 422,
     "comparisons"),
    # /v1/arms
    ("arms: one group", "/v1/arms", {"groups": [{"label": "a", **G}]}, 422, "groups"),
    ("arms: 51 groups", "/v1/arms", {"groups": [{"label": f"a{i}", **G} for i in range(51)]}, 422, "groups"),
    ("arms: duplicate labels", "/v1/arms", {"groups": [{"label": "a", **G}, {"label": "a", **T}]}, 422,
     "groups.1.label"),
    ("arms: group without label", "/v1/arms", {"groups": [{"label": "a", **G}, T]}, 422, "groups.1.label"),
    ("arms: unknown control", "/v1/arms", {"groups": [{"label": "a", **G}, {"label": "b", **T}], "control": "c"},
     422, "control"),
    ("arms: unknown comparisons", "/v1/arms",
     {"groups": [{"label": "a", **G}, {"label": "b", **T}], "comparisons": "some"}, 422, "comparisons"),
    # /v1/allocation-check
    ("allocation: one arm", "/v1/allocation-check", {"observed": [100]}, 422, "observed"),
    ("allocation: negative count", "/v1/allocation-check", {"observed": [100, -1]}, 422, "observed.1"),
    ("allocation: float count", "/v1/allocation-check", {"observed": [100.0, 100]}, 422, "observed.0"),
    ("allocation: weights of the wrong length", "/v1/allocation-check",
     {"observed": [100, 100], "expected_weights": [1, 1, 1]}, 422, "expected_weights"),
    ("allocation: zero weight", "/v1/allocation-check", {"observed": [100, 100], "expected_weights": [0, 1]}, 422,
     "expected_weights.0"),
    ("allocation: threshold 0", "/v1/allocation-check", {"observed": [100, 100], "threshold": 0}, 422, "threshold"),
    ("allocation: nothing observed", "/v1/allocation-check", {"observed": [0, 0]}, 422, "observed"),
    # /v1/guardrail
    ("guardrail: no margin", "/v1/guardrail", TWO, 422, "margin"),
    ("guardrail: NaN margin", "/v1/guardrail", RAW_TWO + ', "margin": NaN}', 400, "body"),
    ("guardrail: negative margin", "/v1/guardrail", {**TWO, "margin": -0.01}, 422, "margin"),
    ("guardrail: unknown margin type", "/v1/guardrail", {**TWO, "margin": 0.01, "margin_type": "percent"}, 422,
     "margin_type"),
    ("guardrail: unknown direction", "/v1/guardrail", {**TWO, "margin": 0.01, "direction": "up"}, 422, "direction"),
    ("guardrail: 201-character metric", "/v1/guardrail", {**TWO, "margin": 0.01, "metric": "m" * 201}, 422,
     "metric"),
]


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True}).test_client()


def check_problem(r, status: int, field: str) -> None:
    assert r.status_code == status, r.get_data(as_text=True)[:500]
    assert r.mimetype == "application/problem+json"
    problem = r.get_json()
    assert problem["status"] == status and problem["type"] and problem["title"] and problem["detail"]
    assert field in problem["errors"], problem["errors"]
    assert all(isinstance(m, str) and m for msgs in problem["errors"].values() for m in msgs)
    assert problem["request_id"] == r.headers["X-Request-ID"]


@pytest.mark.parametrize(("name", "path", "body", "status", "field"), CASES, ids=[c[0] for c in CASES])
def test_bad_request_is_answered_with_the_exact_problem(client, name, path, body, status, field):
    data = json.dumps(body) if isinstance(body, dict | list) else body
    check_problem(client.post(path, data=data, content_type="application/json"), status, field)


POST_PATHS = sorted({case[1] for case in CASES})


@pytest.mark.parametrize("path", POST_PATHS)
@pytest.mark.parametrize(("content_type", "data"), [
    (None, b'{"a": 1}'),
    ("text/plain", b'{"a": 1}'),
    ("application/x-www-form-urlencoded", b"a=1"),
    ("multipart/form-data; boundary=x", b"--x--"),
    ("application/xml", b"<a/>"),
])
def test_every_endpoint_wants_json(client, path, content_type, data):
    headers = {"Content-Type": content_type} if content_type else {}
    check_problem(client.post(path, data=data, headers=headers), 415, "Content-Type")


@pytest.mark.parametrize("path", POST_PATHS)
def test_every_endpoint_rejects_an_oversized_body(path):
    small = create_app({"TESTING": True, "MAX_CONTENT_LENGTH": 64}).test_client()
    body = json.dumps({"padding": "x" * 200})
    check_problem(small.post(path, data=body, content_type="application/json"), 413, "body")


@pytest.mark.parametrize("path", POST_PATHS)
@pytest.mark.parametrize("data", ["", "   ", "{", '{"a": tru}', "[1, 2"])
def test_every_endpoint_rejects_empty_and_truncated_bodies(client, path, data):
    check_problem(client.post(path, data=data, content_type="application/json"), 400, "body")


def test_every_endpoint_rejects_a_deep_body(client):
    for path in POST_PATHS:
        check_problem(client.post(path, data='{"x": ' + nested(33) + "}", content_type="application/json"), 422,
                      "x")


def test_nesting_within_the_limit_reaches_the_schema(client):
    # 32 levels in all (the object plus 31 lists) is allowed: the schema answers, naming the field.
    r = client.post("/v1/tests", data='{"control": ' + nested(31) + "}", content_type="application/json")
    check_problem(r, 422, "control")
    assert "nested deeper" not in json.dumps(r.get_json())


def test_the_depth_limit_is_configurable():
    shallow = create_app({"TESTING": True, "PROPORTIO_MAX_JSON_DEPTH": 4}).test_client()
    r = shallow.post("/v1/batch", json={"comparisons": [{"control": {"label": ["x"]}}]})
    check_problem(r, 422, "comparisons")
    assert "4-level" in json.dumps(r.get_json())


def test_the_catalogue_is_large_and_covers_every_post_endpoint(client):
    assert len(CASES) >= 50
    spec = client.get("/openapi.json").get_json()
    documented = {path for path, ops in spec["paths"].items() if "post" in ops}
    assert documented <= set(POST_PATHS), documented - set(POST_PATHS)
