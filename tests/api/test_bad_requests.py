"""Bad input: every case is a 4xx RFC 9457 problem that names the offending field."""

from __future__ import annotations

import pytest

GOOD = {"control": {"successes": 40, "trials": 1000}, "treatment": {"successes": 55, "trials": 1000}}


def with_(path: str, value):
    """Return GOOD with the dotted ``path`` set to ``value``."""
    body = {"control": dict(GOOD["control"]), "treatment": dict(GOOD["treatment"])}
    keys = path.split(".")
    target = body
    for key in keys[:-1]:
        target = target[key]
    target[keys[-1]] = value
    return body


def without(path: str):
    body = with_(path, None)
    keys = path.split(".")
    target = body
    for key in keys[:-1]:
        target = target[key]
    del target[keys[-1]]
    return body


TEST_CASES = [
    ("boolean successes", with_("control.successes", True), "control.successes"),
    ("float successes", with_("treatment.successes", 5.0), "treatment.successes"),
    ("string successes", with_("treatment.successes", "55"), "treatment.successes"),
    ("string trials", with_("control.trials", "1000"), "control.trials"),
    ("negative successes", with_("control.successes", -1), "control.successes"),
    ("successes above trials", with_("treatment.successes", 1001), "treatment.successes"),
    ("zero trials", with_("control.trials", 0), "control.trials"),
    ("trials above 10^12", with_("control.trials", 10**12 + 1), "control.trials"),
    ("huge integer", with_("control.trials", 10**30), "control.trials"),
    ("null successes", with_("control.successes", None), "control.successes"),
    ("missing trials", without("treatment.trials"), "treatment.trials"),
    ("missing control", without("control"), "control"),
    ("group is a list", with_("control", [40, 1000]), "control"),
    ("unknown top-level field", with_("colour", "blue"), "colour"),
    ("unknown group field", with_("control.rate", 0.04), "control.rate"),
    ("long label", with_("control.label", "x" * 201), "control.label"),
    ("unknown method", with_("method", "t-test"), "method"),
    ("unknown alternative", with_("alternative", "bigger"), "alternative"),
    ("unknown effect", with_("effect", "lift"), "effect"),
    ("alpha zero", with_("alpha", 0), "alpha"),
    ("alpha above one half", with_("alpha", 0.6), "alpha"),
    ("alpha as string", with_("alpha", "0.05"), "alpha"),
    ("alpha boolean", with_("alpha", True), "alpha"),
    ("continuity correction as string", with_("continuity_correction", "yes"), "continuity_correction"),
    ("z-pooled with non-zero null", {**GOOD, "method": "z-pooled", "null_value": 0.01}, "null_value"),
    ("fisher with non-zero null", {**GOOD, "method": "fisher-exact", "null_value": 0.01}, "null_value"),
    ("difference null at 1", {**GOOD, "method": "score", "null_value": 1.0}, "null_value"),
    ("ratio null negative", {**GOOD, "method": "score", "effect": "ratio", "null_value": -1}, "null_value"),
    ("one-sided chi-square", {**GOOD, "method": "chi-square", "alternative": "less"}, "alternative"),
    ("z-unpooled on a ratio", {**GOOD, "method": "z-unpooled", "effect": "ratio"}, "method"),
    ("continuity correction on score", {**GOOD, "method": "score", "continuity_correction": True},
     "continuity_correction"),
]


@pytest.mark.parametrize(("name", "body", "field"), TEST_CASES, ids=[c[0] for c in TEST_CASES])
def test_tests_endpoint_rejects_with_422_naming_the_field(client, name, body, field):
    r = client.post("/v1/tests", json=body)
    assert r.status_code == 422, r.get_json()
    assert r.mimetype == "application/problem+json"
    problem = r.get_json()
    assert {"type", "title", "status", "detail", "errors"} <= set(problem)
    assert problem["status"] == 422
    assert field in problem["errors"], problem["errors"]


INTERVAL_CASES = [
    ("proportion without group", {"effect": "proportion", "control": GOOD["control"]}, "group"),
    ("difference without treatment", {"effect": "difference", "control": GOOD["control"]}, "treatment"),
    ("method of another effect", {**GOOD, "effect": "difference", "method": "wilson"}, "method"),
    ("confidence one", {**GOOD, "confidence": 1.0}, "confidence"),
    ("confidence zero", {**GOOD, "confidence": 0}, "confidence"),
    ("group with two-group effect", {**GOOD, "group": GOOD["control"]}, "group"),
    ("unknown effect", {**GOOD, "effect": "risk"}, "effect"),
]


@pytest.mark.parametrize(("name", "body", "field"), INTERVAL_CASES, ids=[c[0] for c in INTERVAL_CASES])
def test_intervals_endpoint_rejects_with_422_naming_the_field(client, name, body, field):
    r = client.post("/v1/intervals", json=body)
    assert r.status_code == 422, r.get_json()
    assert field in r.get_json()["errors"]


@pytest.mark.parametrize(("data", "content_type", "status"), [
    ("{not json", "application/json", 400),
    ('{"control": ', "application/json", 400),
    ('{"alpha": NaN}', "application/json", 400),
    ('{"alpha": Infinity}', "application/json", 400),
    ("", "application/json", 400),
    ("[1, 2]", "application/json", 422),
    ('"text"', "application/json", 422),
    ('{"control": {}}', "text/plain", 415),
    ('{"control": {}}', "application/x-www-form-urlencoded", 415),
])
def test_malformed_bodies_and_wrong_media_types(client, data, content_type, status):
    r = client.post("/v1/tests", data=data, content_type=content_type)
    assert r.status_code == status
    assert r.mimetype == "application/problem+json"
    assert r.get_json()["errors"]


def test_body_over_the_limit_is_413():
    from proportio.api import create_app

    small = create_app({"TESTING": True, "MAX_CONTENT_LENGTH": 100}).test_client()
    r = small.post("/v1/tests", json={**GOOD, "padding": "x" * 500})
    assert r.status_code == 413
    assert r.mimetype == "application/problem+json"


def test_unknown_path_and_wrong_verb_are_problems(client):
    r = client.get("/v1/nothing")
    assert r.status_code == 404 and r.mimetype == "application/problem+json"
    r = client.get("/v1/tests")
    assert r.status_code == 405 and "POST" in r.headers["Allow"]


def test_an_unexpected_error_is_a_generic_500_without_internals(app, monkeypatch):
    from proportio import operations

    def boom(data):
        raise RuntimeError("secret internal detail")

    monkeypatch.setattr(operations, "run_test", boom)
    r = app.test_client().post("/v1/tests", json=GOOD)
    assert r.status_code == 500
    assert r.mimetype == "application/problem+json"
    assert "secret" not in r.get_data(as_text=True)
    assert "Traceback" not in r.get_data(as_text=True)


@pytest.mark.parametrize(("path", "body", "field"), [
    # Found by review: integers beyond the float range once raised OverflowError (a 500).
    ("/v1/tests", {**GOOD, "alpha": 10**400}, "alpha"),
    ("/v1/tests", {**GOOD, "null_value": 10**400, "method": "score"}, "null_value"),
    ("/v1/intervals", {**GOOD, "confidence": 10**400}, "confidence"),
    ("/v1/sample-size", {"baseline_rate": 10**400, "expected_rate": 0.5}, "baseline_rate"),
    # A ratio null value whose square overflows float64 once reached the core (a 500).
    ("/v1/tests", {**GOOD, "method": "score", "effect": "ratio", "null_value": 1e160}, "null_value"),
    ("/v1/guardrail", {**GOOD, "margin": 1e200, "margin_type": "relative", "direction": "lower-is-better"},
     "margin"),
])
def test_huge_numbers_are_422_naming_the_field(client, path, body, field):
    r = client.post(path, json=body)
    assert r.status_code == 422, r.get_data(as_text=True)
    assert field in r.get_json()["errors"]


def test_exact_test_with_a_contradicting_interval_says_the_test_decides(client):
    # compare(5/9 vs 0/5) with Boschloo: p = 0.06 (not significant) while the Miettinen-Nurminen interval
    # excludes 0 (found by review). The answer must say which one decides.
    body = client.post("/v1/tests", json={"treatment": {"successes": 5, "trials": 9},
                                          "control": {"successes": 0, "trials": 5},
                                          "method": "boschloo-exact"}).get_json()
    assert body["reject_null"] is False and body["interval"]["lower"] > 0
    assert any("the test's p-value decides" in w for w in body["warnings"])


def test_conditional_exact_interval_is_bounded_in_cost(client):
    r = client.post("/v1/intervals", json={"effect": "odds-ratio", "method": "conditional-exact",
                                           "treatment": {"successes": 50000, "trials": 100000},
                                           "control": {"successes": 40000, "trials": 100000}})
    assert r.status_code == 422 and "method" in r.get_json()["errors"]


def test_a_difference_null_too_small_to_resolve_is_422(client):
    # A null of 5e-324 once made the restricted variance underflow, so 0/10 vs 0/20 "rejected" at p = 0
    # while its interval contained the null (found by a hypothesis seed).
    r = client.post("/v1/tests", json={**GOOD, "method": "score", "null_value": 5e-324})
    assert r.status_code == 422 and "null_value" in r.get_json()["errors"]
