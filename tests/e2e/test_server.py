"""End to end through a real gunicorn: the client, the CLI's --url mode and the raw HTTP contract."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
import requests

from proportio.client import Client, ProportioError

pytestmark = pytest.mark.e2e


def test_client_test_and_interval(server_url):
    with Client(server_url) as api:
        result = api.test(control=(412, 9630), treatment="471/9598")
        assert result["method"] == "z-pooled" and 0 < result["p_value"] < 1
        ci = api.interval("proportion", group={"successes": 0, "trials": 25}, method="jeffreys")
        assert ci["lower"] == 0.0 and 0 < ci["upper"] < 0.2
        assert api.health()["status"] == "ok"
        assert api.methods()["cautions"]


def test_client_raises_the_typed_problem(server_url):
    with Client(server_url) as api, pytest.raises(ProportioError) as exc:
        api.test(control=(11, 10), treatment=(1, 10))
    assert exc.value.status == 422
    assert "control.successes" in exc.value.errors
    assert exc.value.request_id


def test_client_reports_an_unreachable_service():
    with Client("http://127.0.0.1:9", retries=1, backoff=0.01, timeout=1) as api, pytest.raises(ProportioError) as e:
        api.health()
    assert e.value.status == 0


def test_cli_url_mode_prints_what_the_service_returns(server_url):
    out = subprocess.run(
        [sys.executable, "-m", "proportio.cli", "test", "--control", "480/10000", "--treatment", "560/10000",
         "--url", server_url, "--json"], capture_output=True, text=True, check=True).stdout
    served = requests.post(server_url + "/v1/tests", json={"control": {"successes": 480, "trials": 10000},
                                                           "treatment": {"successes": 560, "trials": 10000}},
                           timeout=10).json()
    assert json.loads(out) == served


def test_cli_url_mode_bad_counts_exit_2(server_url):
    proc = subprocess.run(
        [sys.executable, "-m", "proportio.cli", "test", "--control", "48/10", "--treatment", "5/10",
         "--url", server_url], capture_output=True, text=True)
    assert proc.returncode == 2 and "control.successes" in proc.stderr


def test_no_server_banner_and_no_stack_traces(server_url):
    r = requests.post(server_url + "/v1/tests", data="{oops", headers={"Content-Type": "application/json"},
                      timeout=10)
    assert r.status_code == 400 and r.headers["Content-Type"] == "application/problem+json"
    assert "Traceback" not in r.text
