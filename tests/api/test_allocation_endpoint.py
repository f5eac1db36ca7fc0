"""POST /v1/allocation-check over HTTP: the sample-ratio-mismatch check."""

from __future__ import annotations

import math

import pytest
from scipy.stats import chisquare


def post(client, **body):
    return client.post("/v1/allocation-check", json=body)


@pytest.mark.parametrize(("observed", "weights"), [
    ([5021, 4979], None),
    ([50_421, 49_087], [1, 1]),
    ([3400, 3300, 3350], [1, 1, 1]),
    ([9100, 900], [9, 1]),
    ([2010, 1005, 950], [0.5, 0.25, 0.25]),
    ([12, 30, 7, 0], [2, 5, 1, 1]),
])
def test_matches_scipy_chisquare(client, observed, weights):
    body = post(client, observed=observed, **({} if weights is None else {"expected_weights": weights})).get_json()
    total = sum(observed)
    shares = [1 / len(observed)] * len(observed) if weights is None else [w / sum(weights) for w in weights]
    # scipy.stats.chisquare (Pearson's goodness-of-fit test)
    ref = chisquare(observed, [s * total for s in shares])
    assert body["statistic"] == pytest.approx(ref.statistic, rel=1e-9)
    assert body["p_value"] == pytest.approx(ref.pvalue, rel=1e-9)
    assert body["df"] == len(observed) - 1
    assert body["threshold"] == 0.001
    assert body["mismatch"] is bool(ref.pvalue < 0.001)
    assert [a["observed"] for a in body["arms"]] == observed
    assert sum(a["standardized_residual"] ** 2 for a in body["arms"]) == pytest.approx(ref.statistic, rel=1e-9)
    assert [a["label"] for a in body["arms"]] == [None] * len(observed)


def test_a_mismatch_says_plainly_that_the_other_results_are_untrustworthy(client):
    body = post(client, observed=[50_421, 49_087], labels=["current checkout", "one-page checkout"]).get_json()
    assert body["mismatch"] is True
    assert "should not be trusted" in body["summary"]
    assert 'arm 1 ("current checkout")' in body["summary"]
    assert [a["label"] for a in body["arms"]] == ["current checkout", "one-page checkout"]


def test_a_sound_split_is_not_a_mismatch(client):
    body = post(client, observed=[5021, 4979], expected_weights=[1, 1]).get_json()
    assert body["mismatch"] is False
    assert "consistent with the plan" in body["summary"]


def test_threshold_is_configurable(client):
    assert post(client, observed=[5100, 4900], threshold=0.05).get_json()["mismatch"] is True
    assert post(client, observed=[5100, 4900]).get_json()["mismatch"] is False


def test_huge_imbalance_keeps_a_finite_log10_p_value(client):
    body = post(client, observed=[10**9, 10**8]).get_json()
    assert body["p_value"] == 0.0 and body["mismatch"] is True
    assert math.isfinite(body["log10_p_value"]) and body["log10_p_value"] < -300


def test_small_expected_counts_warn(client):
    body = post(client, observed=[3, 1]).get_json()
    assert body["warnings"] and "exact binomial" in body["warnings"][0]


@pytest.mark.parametrize(("body", "field"), [
    ({"observed": [5021, True]}, "observed.1"),
    ({"observed": [5021.0, 4979]}, "observed.0"),
    ({"observed": [-1, 4979]}, "observed.0"),
    ({"observed": ["5021", 4979]}, "observed.0"),
    ({"observed": [5021]}, "observed"),
    ({"observed": [1] * 51}, "observed"),
    ({"observed": [0, 0]}, "observed"),
    ({"observed": [2**53, 1]}, "observed"),
    ({"observed": [2**53 + 1, 1]}, "observed.0"),
    ({}, "observed"),
    ({"observed": [5021, 4979], "expected_weights": [1, 1, 1]}, "expected_weights"),
    ({"observed": [5021, 4979], "expected_weights": [1, 0]}, "expected_weights.1"),
    ({"observed": [5021, 4979], "expected_weights": [1, -2]}, "expected_weights.1"),
    ({"observed": [5021, 4979], "expected_weights": [1, "1"]}, "expected_weights.1"),
    ({"observed": [5021, 4979], "expected_weights": [1e-300, 1e300]}, "expected_weights"),
    ({"observed": [5021, 4979], "threshold": 0}, "threshold"),
    ({"observed": [5021, 4979], "threshold": 0.6}, "threshold"),
    ({"observed": [5021, 4979], "labels": ["a"]}, "labels"),
    ({"observed": [5021, 4979], "labels": ["a", "a"]}, "labels"),
    ({"observed": [5021, 4979], "labels": ["a", 2]}, "labels.1"),
    ({"observed": [5021, 4979], "arms": 2}, "arms"),
])
def test_bad_requests_name_the_field(client, body, field):
    r = client.post("/v1/allocation-check", json=body)
    assert r.status_code == 422, r.get_json()
    assert r.mimetype == "application/problem+json"
    assert field in r.get_json()["errors"], r.get_json()["errors"]
