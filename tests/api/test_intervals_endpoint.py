"""POST /v1/intervals over HTTP for every effect and method."""

from __future__ import annotations

import pytest

from proportio.stats import intervals

CONTROL = {"successes": 12, "trials": 150}
TREATMENT = {"successes": 21, "trials": 148}


@pytest.mark.parametrize(("effect", "method"), [(e, m) for e, ms in intervals.METHODS.items() for m in ms])
def test_every_method_answers_and_matches_the_core(client, effect, method):
    if effect == "proportion":
        body = {"effect": effect, "method": method, "group": TREATMENT}
        core = intervals.interval(effect, method, 0.9, successes=21, trials=148)
    else:
        body = {"effect": effect, "method": method, "control": CONTROL, "treatment": TREATMENT}
        core = intervals.interval(effect, method, 0.9, treatment=(21, 148), control=(12, 150))
    r = client.post("/v1/intervals", json={**body, "confidence": 0.9})
    assert r.status_code == 200, r.get_json()
    got = r.get_json()
    assert got == {"effect": effect, "method": method, "confidence": 0.9, "estimate": core.estimate,
                   "lower": core.lower, "upper": core.upper, "warnings": list(core.warnings)}
    assert got["lower"] <= got["estimate"] <= got["upper"]


def test_unbounded_ratio_is_null_with_a_warning(client):
    r = client.post("/v1/intervals", json={"effect": "ratio", "control": {"successes": 0, "trials": 40},
                                           "treatment": {"successes": 3, "trials": 40}})
    body = r.get_json()
    assert body["upper"] is None and body["estimate"] is None
    assert body["lower"] > 0
    assert any("unbounded" in w for w in body["warnings"])


def test_defaults_are_documented_ones(client):
    body = client.post("/v1/intervals", json={"control": CONTROL, "treatment": TREATMENT}).get_json()
    assert body["effect"] == "difference" and body["method"] == "newcombe" and body["confidence"] == 0.95
