"""POST /v1/tests over HTTP: the contract's fields, every method, and agreement with the core."""

from __future__ import annotations

import math

import pytest

from proportio.stats import twogroup

CONTROL = {"successes": 412, "trials": 9630}
TREATMENT = {"successes": 471, "trials": 9598}
FIELDS = {"method", "method_reason", "statistic", "p_value", "log10_p_value", "alpha", "reject_null", "alternative",
          "null_value", "effect", "continuity_correction", "estimate", "interval", "assumptions", "warnings", "summary"}


def post(client, **body):
    return client.post("/v1/tests", json={"control": CONTROL, "treatment": TREATMENT, **body})


def test_default_request_answers_every_contract_field(client):
    r = post(client)
    assert r.status_code == 200
    assert r.mimetype == "application/json"
    body = r.get_json()
    assert set(body) == FIELDS
    assert body["method"] == "z-pooled" and "at least 5" in body["method_reason"]
    assert set(body["estimate"]) == {"control_rate", "treatment_rate", "difference", "relative_lift", "odds_ratio"}
    assert set(body["interval"]) == {"method", "confidence", "lower", "upper"}
    assert body["assumptions"]["threshold"] == 5
    assert body["estimate"]["difference"] == pytest.approx(471 / 9598 - 412 / 9630, rel=1e-12)


@pytest.mark.parametrize("method", [m for m in twogroup.METHODS if m != "auto"])
@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_each_method_matches_the_core_exactly(client, method, alternative):
    if method == "chi-square" and alternative != "two-sided":
        pytest.skip("chi-square is two-sided only")
    control, treatment = {"successes": 7, "trials": 40}, {"successes": 15, "trials": 42}
    r = client.post("/v1/tests", json={"control": control, "treatment": treatment, "method": method,
                                        "alternative": alternative})
    assert r.status_code == 200, r.get_json()
    body = r.get_json()
    core = twogroup.compare([15], [42], [7], [40], method=method, alternative=alternative)[0]
    assert body["method"] == method
    assert body["p_value"] == core.p_value
    assert body["statistic"] == core.statistic
    assert body["interval"]["lower"] == core.interval.lower
    assert body["summary"] == core.summary


def test_auto_picks_an_exact_test_for_small_counts_and_says_why(client):
    r = client.post("/v1/tests", json={"control": {"successes": 1, "trials": 12},
                                       "treatment": {"successes": 6, "trials": 11}})
    body = r.get_json()
    assert r.status_code == 200
    assert body["method"] in ("boschloo-exact", "fisher-exact")
    assert "below 5" in body["method_reason"]
    assert body["assumptions"]["normal_approximation_ok"] is False


def test_non_zero_null_uses_the_score_test_and_its_interval(client):
    body = post(client, null_value=-0.005, alternative="greater").get_json()
    assert body["method"] == "score"
    assert body["interval"]["method"] == "miettinen-nurminen"
    assert body["interval"]["upper"] == 1.0  # one-sided: only the lower bound is informative
    assert body["reject_null"] is (body["interval"]["lower"] > -0.005)


@pytest.mark.parametrize("counts", [
    (0, 10, 0, 10), (10, 10, 10, 10), (0, 1, 1, 1), (1, 1, 0, 1), (0, 10**12, 0, 10**12),
    (10**12, 10**12, 0, 10**12), (5 * 10**11, 10**12, 4 * 10**11, 10**12), (3, 10**12, 0, 10**12),
])
@pytest.mark.parametrize("method", ["auto", "z-pooled", "z-unpooled", "score", "chi-square"])
def test_edge_counts_never_give_nan_or_a_server_error(client, counts, method):
    xt, nt, xc, nc = counts
    r = client.post("/v1/tests", json={"control": {"successes": xc, "trials": nc},
                                       "treatment": {"successes": xt, "trials": nt}, "method": method})
    assert r.status_code == 200, r.get_json()
    text = r.get_data(as_text=True)
    assert "NaN" not in text and "Infinity" not in text
    body = r.get_json()
    if body["p_value"] is not None:
        assert 0.0 <= body["p_value"] <= 1.0


def test_tiny_p_values_keep_a_finite_log10(client):
    body = client.post("/v1/tests", json={"control": {"successes": 4 * 10**11, "trials": 10**12},
                                          "treatment": {"successes": 5 * 10**11, "trials": 10**12},
                                          "method": "z-pooled"}).get_json()
    assert body["p_value"] == 0.0
    # log10 of 2*Phi(-z) for z = 0.1 / sqrt(0.45*0.55*2e-12): the Mills-ratio asymptotic
    # log Phi(-z) ~ -z^2/2 - log(z) - log(sqrt(2 pi)) (Abramowitz & Stegun 26.2.12, from memory).
    z = 0.1 / math.sqrt(0.45 * 0.55 * 2e-12)
    expected = (math.log(2) - z * z / 2 - math.log(z) - 0.5 * math.log(2 * math.pi)) / math.log(10)
    assert body["log10_p_value"] == pytest.approx(expected, rel=1e-9)
    assert any("log10_p_value" in w for w in body["warnings"])


@pytest.mark.parametrize("counts", [(10**12 - 30, 10**12, 10**12 - 10, 10**12), (30, 10**12, 10, 10**12)])
def test_pooled_z_keeps_precision_for_rates_near_0_and_1_at_10_12_trials(client, counts):
    # Reference: the pooled z statistic evaluated in exact rational arithmetic (the definition), then rounded.
    from fractions import Fraction

    xt, nt, xc, nc = counts
    pooled = Fraction(xt + xc, nt + nc)
    diff = Fraction(xt, nt) - Fraction(xc, nc)
    z = float(diff) / math.sqrt(float(pooled * (1 - pooled) * (Fraction(1, nt) + Fraction(1, nc))))
    body = client.post("/v1/tests", json={"control": {"successes": xc, "trials": nc},
                                          "treatment": {"successes": xt, "trials": nt},
                                          "method": "z-pooled"}).get_json()
    assert body["statistic"] == pytest.approx(z, rel=1e-12)
    assert body["estimate"]["difference"] == pytest.approx(float(diff), rel=1e-12)
