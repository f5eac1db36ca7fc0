"""POST /v1/guardrail over HTTP: verdicts, agreement with the core to the last bit, bad input, edge counts."""

from __future__ import annotations

import dataclasses
import math

import pytest

from proportio.stats import guardrail

HIGHER, LOWER = "higher-is-better", "lower-is-better"
FIELDS = {"verdict", "metric", "test", "interval", "estimate", "margin", "margin_type", "direction", "alpha",
          "additional_trials_per_group", "summary", "warnings"}

# (control, treatment, margin, margin_type, direction, expected verdict) -- invented web-shop numbers
CASES = [
    ((412, 9630), (471, 9598), 0.005, "absolute", HIGHER, "pass"),
    ((412, 9630), (320, 9598), 0.002, "absolute", HIGHER, "fail"),
    ((412, 9630), (405, 9598), 0.003, "absolute", HIGHER, "inconclusive"),
    ((61, 9630), (58, 9598), 0.5, "relative", LOWER, "pass"),
    ((100, 10000), (150, 10000), 0.1, "relative", LOWER, "fail"),
    ((100, 10000), (105, 10000), 0.1, "relative", LOWER, "inconclusive"),
    ((20, 9630), (45, 9598), 0.001, "absolute", LOWER, "fail"),
    ((190, 200), (188, 200), 0.15, "relative", HIGHER, "pass"),
]


def body(control, treatment, margin, margin_type=None, direction=None, **extra):
    out = {"control": {"successes": control[0], "trials": control[1]},
           "treatment": {"successes": treatment[0], "trials": treatment[1]}, "margin": margin}
    if margin_type is not None:
        out["margin_type"] = margin_type
    if direction is not None:
        out["direction"] = direction
    return {**out, **extra}


def as_json(result) -> dict:
    """The core result as the endpoint must render it (dataclasses to dicts; tuples to lists)."""
    def convert(v):
        if dataclasses.is_dataclass(v):
            return {f.name: convert(getattr(v, f.name)) for f in dataclasses.fields(v)}
        if isinstance(v, tuple):
            return [convert(x) for x in v]
        return v
    return convert(result)


@pytest.mark.parametrize(("control", "treatment", "margin", "margin_type", "direction", "verdict"), CASES)
def test_verdict_matches_the_core_to_the_last_bit(client, control, treatment, margin, margin_type, direction,
                                                  verdict):
    r = client.post("/v1/guardrail", json=body(control, treatment, margin, margin_type, direction,
                                               metric="checkout"))
    assert r.status_code == 200, r.get_json()
    got = r.get_json()
    assert set(got) == FIELDS
    core = guardrail.guardrail(treatment[0], treatment[1], control[0], control[1], margin=margin,
                               margin_type=margin_type, direction=direction, metric="checkout")
    assert got == as_json(core)
    assert got["verdict"] == verdict
    assert got["summary"].startswith(verdict.capitalize() + " (checkout)")
    if verdict == "inconclusive":
        assert got["additional_trials_per_group"] is None or got["additional_trials_per_group"] >= 1
    else:
        assert got["additional_trials_per_group"] is None


def test_defaults_are_absolute_higher_is_better_alpha_5_percent(client):
    got = client.post("/v1/guardrail", json=body((412, 9630), (471, 9598), 0.005)).get_json()
    assert (got["margin_type"], got["direction"], got["alpha"], got["metric"]) == ("absolute", HIGHER, 0.05, None)
    assert got["test"] | {"statistic": None, "p_value": None, "inferiority_p_value": None} == {
        "method": "score", "effect": "difference", "null_value": -0.005, "alternative": "greater",
        "statistic": None, "p_value": None, "inferiority_p_value": None}
    assert got["interval"]["method"] == "miettinen-nurminen" and got["interval"]["confidence"] == pytest.approx(0.9)


def test_relative_lower_is_better_tests_the_ratio_against_one_plus_margin(client):
    got = client.post("/v1/guardrail", json=body((100, 10000), (105, 10000), 0.1, "relative", LOWER,
                                                 alpha=0.025)).get_json()
    assert got["test"]["effect"] == "ratio" and got["test"]["null_value"] == pytest.approx(1.1)
    assert got["test"]["alternative"] == "less" and got["interval"]["confidence"] == pytest.approx(0.95)


@pytest.mark.parametrize("counts", [(0, 1, 0, 1), (1, 1, 1, 1), (0, 1, 1, 1), (1, 1, 0, 1), (0, 10**12, 0, 10**12),
                                    (10**12, 10**12, 10**12, 10**12), (0, 7, 3, 10**12), (5, 9, 0, 40)])
@pytest.mark.parametrize(("margin_type", "direction"), [("absolute", HIGHER), ("absolute", LOWER),
                                                        ("relative", HIGHER), ("relative", LOWER)])
def test_edge_counts_answer_without_nan(client, counts, margin_type, direction):
    xc, nc, xt, nt = counts
    r = client.post("/v1/guardrail", json=body((xc, nc), (xt, nt), 0.2, margin_type, direction))
    assert r.status_code == 200, r.get_json()
    text = r.get_data(as_text=True)
    assert "NaN" not in text and "Infinity" not in text
    got = r.get_json()
    assert got["verdict"] in ("pass", "fail", "inconclusive")
    for v in (got["test"]["p_value"], got["test"]["inferiority_p_value"]):
        assert 0.0 <= v <= 1.0 and math.isfinite(v)


def test_unbounded_ratio_is_null(client):
    got = client.post("/v1/guardrail", json=body((0, 40), (3, 40), 0.2, "relative", LOWER)).get_json()
    assert got["interval"]["upper"] is None and got["estimate"]["relative_lift"] is None
    assert got["verdict"] in ("fail", "inconclusive")


GOOD = body((40, 1000), (55, 1000), 0.02)


def with_(path: str, value):
    out = {**GOOD, "control": dict(GOOD["control"]), "treatment": dict(GOOD["treatment"])}
    keys = path.split(".")
    target = out
    for key in keys[:-1]:
        target = target[key]
    if value is ...:
        del target[keys[-1]]
    else:
        target[keys[-1]] = value
    return out


@pytest.mark.parametrize(("payload", "field"), [
    (with_("margin", ...), "margin"),
    (with_("margin", 0), "margin"),
    (with_("margin", -0.01), "margin"),
    (with_("margin", 1.0), "margin"),
    (with_("margin", "0.02"), "margin"),
    (with_("margin", True), "margin"),
    (with_("margin", None), "margin"),
    ({**GOOD, "margin": 1.5, "margin_type": "relative"}, "margin"),
    (with_("margin_type", "percent"), "margin_type"),
    (with_("margin_type", 1), "margin_type"),
    (with_("direction", "up"), "direction"),
    (with_("alpha", 0.6), "alpha"),
    (with_("alpha", 0), "alpha"),
    (with_("metric", 5), "metric"),
    (with_("metric", "x" * 201), "metric"),
    (with_("colour", "blue"), "colour"),
    (with_("alternative", "less"), "alternative"),
    (with_("control", ...), "control"),
    (with_("treatment.successes", 1001), "treatment.successes"),
    (with_("control.trials", 0), "control.trials"),
    (with_("control.successes", 4.0), "control.successes"),
    (with_("treatment.trials", 10**12 + 1), "treatment.trials"),
])
def test_bad_requests_are_422_naming_the_field(client, payload, field):
    r = client.post("/v1/guardrail", json=payload)
    assert r.status_code == 422, r.get_json()
    assert r.mimetype == "application/problem+json"
    assert field in r.get_json()["errors"], r.get_json()


def test_a_large_relative_margin_is_accepted_when_lower_is_better(client):
    r = client.post("/v1/guardrail", json={**GOOD, "margin": 1.5, "margin_type": "relative", "direction": LOWER})
    assert r.status_code == 200


def test_malformed_and_non_json_bodies(client):
    assert client.post("/v1/guardrail", data="{", content_type="application/json").status_code == 400
    assert client.post("/v1/guardrail", data="x", content_type="text/plain").status_code == 415


def test_openapi_documents_the_endpoint(client):
    spec = client.get("/openapi.json").get_json()
    op = spec["paths"]["/v1/guardrail"]["post"]
    assert "422" in op["responses"]
    names = [m["name"] for m in client.get("/v1/methods").get_json()["methods"]]
    assert "guardrail" in names
