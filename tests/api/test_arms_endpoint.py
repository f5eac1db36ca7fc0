"""POST /v1/arms over HTTP: omnibus test, pairs, adjustments, simultaneous intervals, errors."""

from __future__ import annotations

import gc
import json

import numpy as np
import pytest
from scipy.stats import chi2_contingency
from statsmodels.stats.multitest import multipletests

from proportio.stats import twogroup

ARMS = [{"label": "current", "successes": 412, "trials": 9630},
        {"label": "one-page", "successes": 471, "trials": 9598},
        {"label": "express", "successes": 455, "trials": 9611},
        {"label": "guest", "successes": 501, "trials": 9644}]
TEST_FIELDS = {"method", "method_reason", "statistic", "p_value", "log10_p_value", "alpha", "reject_null",
               "alternative", "null_value", "effect", "continuity_correction", "estimate", "interval", "assumptions",
               "warnings", "summary"}


def post(client, **body):
    return client.post("/v1/arms", json={"groups": ARMS, **body})


@pytest.fixture
def no_forced_gc(monkeypatch):
    """statsmodels 0.15 multipletests("holm") runs gc.collect() on every call; it changes no number."""
    monkeypatch.setattr(gc, "collect", lambda *args, **kwargs: 0)


def test_omnibus_matches_scipy_chi2_contingency(client):
    body = post(client).get_json()
    table = np.array([[g["successes"], g["trials"] - g["successes"]] for g in ARMS])
    # scipy.stats.chi2_contingency, Pearson's statistic without Yates' correction
    stat, p, dof, expected = chi2_contingency(table, correction=False)
    omnibus = body["omnibus"]
    assert omnibus["statistic"] == pytest.approx(stat, rel=1e-9)
    assert omnibus["p_value"] == pytest.approx(p, rel=1e-9)
    assert omnibus["df"] == dof == 3
    assert omnibus["min_expected_count"] == pytest.approx(expected.min(), rel=1e-12)
    assert omnibus["log10_p_value"] == pytest.approx(np.log10(p), rel=1e-9)


def test_vs_control_pairs_follow_the_input_order(client):
    body = post(client, control="express").get_json()
    assert body["control"] == "express" and body["comparison_set"] == "vs-control"
    assert [(c["treatment"], c["control"]) for c in body["comparisons"]] == [
        ("current", "express"), ("one-page", "express"), ("guest", "express")]
    default = post(client).get_json()
    assert default["control"] == "current"
    assert [c["treatment"] for c in default["comparisons"]] == ["one-page", "express", "guest"]


def test_all_pairs(client):
    body = post(client, comparisons="all-pairs", control="express").get_json()
    pairs = [(c["treatment"], c["control"]) for c in body["comparisons"]]
    assert len(pairs) == 6 == len({frozenset(p) for p in pairs})
    # The control arm is the control of its pairs; otherwise the earlier arm is.
    assert pairs == [("one-page", "current"), ("current", "express"), ("guest", "current"),
                     ("one-page", "express"), ("guest", "one-page"), ("guest", "express")]


def test_without_simultaneous_intervals_each_pair_is_the_single_call(client):
    body = json.loads(post(client, adjustment="none", simultaneous_intervals=False, method="score",
                           alternative="greater").get_data())
    by_label = {g["label"]: g for g in ARMS}
    for pair in body["comparisons"]:
        single = client.post("/v1/tests", json={
            "control": {k: by_label[pair["control"]][k] for k in ("successes", "trials")},
            "treatment": {k: by_label[pair["treatment"]][k] for k in ("successes", "trials")},
            "method": "score", "alternative": "greater"})
        expected = json.loads(single.get_data())
        got = {k: v for k, v in pair.items() if k in TEST_FIELDS}
        iv = got["interval"]
        assert iv.pop("simultaneous") is False and iv.pop("family_confidence") == iv["confidence"]
        assert got == expected
        assert pair["adjusted_p_value"] == pair["p_value"]


def test_simultaneous_intervals_are_bonferroni_by_default(client):
    body = post(client).get_json()
    m = len(body["comparisons"])
    assert body["simultaneous_intervals"] is True and body["family_confidence"] == 0.95
    assert "Bonferroni" in body["summary"]
    x = [g["successes"] for g in ARMS]
    n = [g["trials"] for g in ARMS]
    for k, pair in enumerate(body["comparisons"], start=1):
        iv = pair["interval"]
        assert iv["simultaneous"] is True and iv["family_confidence"] == 0.95
        assert iv["confidence"] == pytest.approx(1 - 0.05 / m, abs=1e-15)
        # Dunn (1961): each interval at 1 - alpha/m; the core's interval at alpha/m, to the last bit.
        core = twogroup.compare([x[k]], [n[k]], [x[0]], [n[0]], alpha=0.05 / m)[0]
        assert (iv["lower"], iv["upper"], iv["method"]) == (core.interval.lower, core.interval.upper,
                                                            core.interval.method)
        # The test itself is at alpha, as the single call.
        single = twogroup.compare([x[k]], [n[k]], [x[0]], [n[0]])[0]
        assert pair["p_value"] == single.p_value and pair["reject_null"] == single.reject_null
        assert "97.5%" not in pair["summary"] and f"{100 * (1 - 0.05 / m):.1f}% CI" in pair["summary"]


@pytest.mark.parametrize(("adjustment", "statsmodels_name"), [("holm", "holm"), ("bonferroni", "bonferroni"),
                                                              ("benjamini-hochberg", "fdr_bh")])
def test_pairwise_adjustment_matches_statsmodels_multipletests(client, adjustment, statsmodels_name, no_forced_gc):
    body = post(client, comparisons="all-pairs", adjustment=adjustment).get_json()
    p = np.array([c["p_value"] for c in body["comparisons"]])
    # statsmodels 0.15 function stats.multitest.multipletests
    ref = multipletests(p, alpha=0.05, method=statsmodels_name)[1]
    np.testing.assert_allclose([c["adjusted_p_value"] for c in body["comparisons"]], ref, rtol=1e-12, atol=0)
    for c in body["comparisons"]:
        assert c["adjusted_reject_null"] == (c["adjusted_p_value"] <= 0.05)
        assert f"Adjusted for 6 comparisons ({adjustment})" in c["summary"]


def test_two_arms_omnibus_is_the_square_of_the_pooled_z(client):
    body = client.post("/v1/arms", json={"groups": ARMS[:2], "method": "z-pooled"}).get_json()
    (pair,) = body["comparisons"]
    assert body["omnibus"]["statistic"] == pytest.approx(pair["statistic"] ** 2, rel=1e-12)
    assert body["omnibus"]["p_value"] == pytest.approx(pair["p_value"], rel=1e-9)
    # One pair: nothing to adjust for, so the interval is the single test's.
    assert pair["interval"]["simultaneous"] is False and pair["interval"]["confidence"] == 0.95


@pytest.mark.parametrize("groups", [
    [{"label": "a", "successes": 0, "trials": 10}, {"label": "b", "successes": 0, "trials": 12},
     {"label": "c", "successes": 0, "trials": 1}],
    [{"label": "a", "successes": 10, "trials": 10}, {"label": "b", "successes": 1, "trials": 1}],
    [{"label": "a", "successes": 0, "trials": 10**12}, {"label": "b", "successes": 10**12, "trials": 10**12},
     {"label": "c", "successes": 3, "trials": 10**12}],
    [{"label": "a", "successes": 1, "trials": 1}, {"label": "b", "successes": 0, "trials": 1}],
])
def test_edge_counts_never_give_nan_or_a_server_error(client, groups):
    r = client.post("/v1/arms", json={"groups": groups, "comparisons": "all-pairs"})
    assert r.status_code == 200, r.get_json()
    text = r.get_data(as_text=True)
    assert "NaN" not in text and "Infinity" not in text
    assert 0.0 <= r.get_json()["omnibus"]["p_value"] <= 1.0


def test_fifty_arms_all_pairs(client):
    groups = [{"label": f"arm {i}", "successes": 100 + 3 * i, "trials": 5000} for i in range(50)]
    body = client.post("/v1/arms", json={"groups": groups, "comparisons": "all-pairs", "method": "z-pooled"}
                       ).get_json()
    assert len(body["comparisons"]) == 50 * 49 // 2
    assert body["omnibus"]["df"] == 49


def with_groups(*changes):
    groups = [dict(g) for g in ARMS]
    for index, key, value in changes:
        if value is None:
            groups[index].pop(key)
        else:
            groups[index][key] = value
    return groups


@pytest.mark.parametrize(("body", "field"), [
    ({"groups": with_groups((2, "label", "current"))}, "groups.2.label"),
    ({"groups": with_groups((0, "label", None))}, "groups.0.label"),
    ({"groups": with_groups((0, "label", ""))}, "groups.0.label"),
    ({"groups": with_groups((1, "successes", 9599))}, "groups.1.successes"),
    ({"groups": with_groups((3, "trials", 0))}, "groups.3.trials"),
    ({"groups": with_groups((3, "trials", 1.5))}, "groups.3.trials"),
    ({"groups": with_groups((1, "rate", 0.1))}, "groups.1.rate"),
    ({"groups": ARMS[:1]}, "groups"),
    ({"groups": [{"label": f"g{i}", "successes": 1, "trials": 2} for i in range(51)]}, "groups"),
    ({}, "groups"),
    ({"groups": ARMS, "control": "nobody"}, "control"),
    ({"groups": ARMS, "comparisons": "round-robin"}, "comparisons"),
    ({"groups": ARMS, "adjustment": "sidak"}, "adjustment"),
    ({"groups": ARMS, "method": "chi-square", "alternative": "less"}, "alternative"),
    ({"groups": ARMS, "method": "z-unpooled", "effect": "ratio"}, "method"),
    ({"groups": ARMS, "alpha": 0.7}, "alpha"),
    ({"groups": ARMS, "simultaneous_intervals": "yes"}, "simultaneous_intervals"),
    ({"groups": ARMS, "null_value": 0.01}, "null_value"),
])
def test_bad_requests_name_the_field(client, body, field):
    r = client.post("/v1/arms", json=body)
    assert r.status_code == 422, r.get_json()
    assert r.mimetype == "application/problem+json"
    assert field in r.get_json()["errors"], r.get_json()["errors"]


def test_exact_tests_are_bounded(client, monkeypatch):
    monkeypatch.setenv("PROPORTIO_MAX_BATCH_EXACT", "2")
    groups = [{"label": f"g{i}", "successes": i, "trials": 12} for i in range(4)]  # auto: Boschloo for each pair
    r = client.post("/v1/arms", json={"groups": groups})
    assert r.status_code == 422
    assert "3 pairs need an exact test" in r.get_json()["errors"]["groups"][0]
