"""End to end through a real gunicorn: the client's batch, arms and allocation_check, and the CLI's --url mode."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from proportio.client import Client, ProportioError

pytestmark = pytest.mark.e2e


def test_client_batch_equals_single_calls(server_url):
    pairs = [((412, 9630), (471, 9598)), ("1210/9630", "1175/9598"), ((0, 25), (3, 24))]
    with Client(server_url) as api:
        batch = api.batch(pairs, adjustment="holm")
        assert batch["count"] == 3 and batch["adjustment"] == "holm"
        for (control, treatment), item in zip(pairs, batch["results"], strict=True):
            single = api.test(control=control, treatment=treatment)
            assert {k: v for k, v in item.items() if not k.startswith("adjusted_")} == single


def test_client_batch_columns_equal_the_items_form(server_url):
    import numpy as np

    x_c, n_c = np.array([412, 1210, 0]), np.array([9630, 9630, 25])
    x_t, n_t = np.array([471, 1175, 3]), np.array([9598, 9598, 24])
    pairs = [((a, b), (c, d)) for a, b, c, d in zip(x_c.tolist(), n_c.tolist(), x_t.tolist(), n_t.tolist(),
                                                   strict=True)]
    with Client(server_url) as api:
        items = api.batch(pairs, adjustment="holm")["results"]
        answer = api.batch_columns(x_c, n_c, x_t, n_t, adjustment="holm",
                                   fields=["p_value", "adjusted_p_value", "interval_lower"])
    assert answer["count"] == 3 and answer["options"]["method"] == "auto"
    assert answer["columns"]["p_value"] == [it["p_value"] for it in items]
    assert answer["columns"]["adjusted_p_value"] == [it["adjusted_p_value"] for it in items]
    assert answer["columns"]["interval_lower"] == [it["interval"]["lower"] for it in items]


def test_client_batch_error_names_the_item(server_url):
    with Client(server_url) as api, pytest.raises(ProportioError) as exc:
        api.batch([((4, 10), (5, 10)), {"control": {"successes": 11, "trials": 10},
                                        "treatment": {"successes": 1, "trials": 10}}])
    assert exc.value.status == 422
    assert "comparisons.1.control.successes" in exc.value.errors


def test_client_arms_and_allocation_check(server_url):
    with Client(server_url) as api:
        arms = api.arms([("current", 412, 9630), ("one-page", 471, 9598), ("express", 455, 9611)])
        assert len(arms["comparisons"]) == 2 and arms["omnibus"]["df"] == 2
        check = api.allocation_check([50_421, 49_087], expected_weights=[1, 1])
        assert check["mismatch"] is True and "should not be trusted" in check["summary"]


def test_cli_batch_url_mode_prints_what_the_service_returns(server_url, tmp_path):
    path = tmp_path / "comparisons.csv"
    path.write_text("control_successes,control_trials,treatment_successes,treatment_trials\n412,9630,471,9598\n")
    out = subprocess.run([sys.executable, "-m", "proportio.cli", "batch", "--file", str(path), "--url", server_url,
                          "--json"], capture_output=True, text=True, check=True).stdout
    with Client(server_url) as api:
        assert json.loads(out) == api.batch([((412, 9630), (471, 9598))])
