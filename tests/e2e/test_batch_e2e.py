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
