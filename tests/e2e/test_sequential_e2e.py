"""The sequential endpoints end to end through a real gunicorn: client methods and the CLI's --url mode."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
import requests

from proportio.client import Client, ProportioError

pytestmark = pytest.mark.e2e

LOOKS3 = [((169, 3974), (192, 3969)), ((341, 7948), (389, 7941)), ((510, 11917), (588, 11911))]


def test_client_sequential_methods_equal_the_raw_http_answers(server_url):
    with Client(server_url) as api:
        plan = api.sequential_plan(5, baseline_rate=0.043, expected_rate=0.049,
                                   futility="hwang-shih-decani", futility_gamma=-2)
        raw = requests.post(server_url + "/v1/sequential/plan", json={
            "looks": 5, "baseline_rate": 0.043, "expected_rate": 0.049,
            "futility": {"spending": "hwang-shih-decani", "gamma": -2}}, timeout=30).json()
        assert plan == raw and len(plan["looks"]) == 5 and plan["max_sample_size"]["n_total"] > 0

        analysis = api.sequential_analyze(LOOKS3, max_trials=plan["max_sample_size"]["n_total"],
                                          spending="power-family", rho=3)
        assert analysis["decision"] in ("continue", "reject-null") and len(analysis["looks"]) == 3
        same = api.sequential_analyze([{"control": f"{c[0]}/{c[1]}", "treatment": {"successes": t[0], "trials": t[1]}}
                                       for c, t in LOOKS3], plan["max_sample_size"]["n_total"],
                                      spending="power-family", rho=3)
        assert same == analysis

        seq = api.always_valid(control=(510, 11917), treatment="588/11911", tuning=19857)
        assert seq["lower"] < seq["estimate"] < seq["upper"] and seq["tuning"] == 19857.0


def test_client_raises_the_problem_naming_the_look(server_url):
    looks = [((1, 10), (1, 10)), ((2, 20), (2, 20)), ((3, 19), (3, 30))]
    with Client(server_url) as api, pytest.raises(ProportioError) as exc:
        api.sequential_analyze(looks, max_trials=100)
    assert exc.value.status == 422 and "looks.2.control.trials" in exc.value.errors
    with Client(server_url) as api, pytest.raises(ProportioError) as exc:
        api.sequential_plan(3, spending="power-family")
    assert "rho" in exc.value.errors


def test_cli_url_mode_prints_what_the_service_returns(server_url, tmp_path):
    path = tmp_path / "looks.json"
    path.write_text(json.dumps([{"control": {"successes": c[0], "trials": c[1]},
                                 "treatment": {"successes": t[0], "trials": t[1]}} for c, t in LOOKS3]))
    out = subprocess.run([sys.executable, "-m", "proportio.cli", "sequential", "analyze", "--file", str(path),
                          "--max-trials", "39714", "--url", server_url, "--json"],
                         capture_output=True, text=True, check=True).stdout
    served = requests.post(server_url + "/v1/sequential/analyze",
                           json={"looks": json.loads(path.read_text()), "max_trials": 39714}, timeout=30).json()
    assert json.loads(out) == served
    proc = subprocess.run([sys.executable, "-m", "proportio.cli", "sequential", "plan", "--looks", "0",
                           "--url", server_url], capture_output=True, text=True)
    assert proc.returncode == 2 and "looks" in proc.stderr
