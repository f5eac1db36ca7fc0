"""`proportio gate` through a real gunicorn: the service and the in-process path give identical verdicts."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
import requests

from proportio import cli
from proportio.client import Client

pytestmark = pytest.mark.e2e

CASES = [
    # (argv, exit code) -- every verdict, both directions, both margin types
    (["--control", "412/9630", "--treatment", "471/9598", "--margin", "0.005"], 0),
    (["--control", "412/9630", "--treatment", "320/9598", "--margin", "0.002"], 1),
    (["--control", "412/9630", "--treatment", "405/9598", "--margin", "0.003"], 3),
    (["--control", "61/9630", "--treatment", "58/9598", "--margin", "0.5", "--relative", "--lower-is-better"], 0),
    (["--control", "100/10000", "--treatment", "150/10000", "--margin", "0.1", "--relative", "--lower-is-better"], 1),
    (["--control", "100/10000", "--treatment", "105/10000", "--margin", "0.1", "--relative", "--lower-is-better"], 3),
    (["--control", "20/9630", "--treatment", "45/9598", "--margin", "0.001", "--lower-is-better"], 1),
    (["--control", "188/200", "--treatment", "190/200", "--margin", "0.15", "--relative"], 0),
    (["--control", "0/40", "--treatment", "0/40", "--margin", "0.2", "--relative", "--lower-is-better"], 3),
]


@pytest.mark.parametrize(("argv", "code"), CASES)
def test_service_and_local_give_identical_json_and_exit_codes(capsys, monkeypatch, server_url, argv, code):
    monkeypatch.delenv("PROPORTIO_URL", raising=False)
    assert cli.main(["gate", *argv, "--json", "--url", server_url]) == code
    remote = capsys.readouterr().out
    assert cli.main(["gate", *argv, "--json", "--local"]) == code
    local = capsys.readouterr().out
    assert remote == local
    assert cli.main(["gate", *argv, "--url", server_url]) == code
    readable_remote = capsys.readouterr().out
    assert cli.main(["gate", *argv]) == code
    assert capsys.readouterr().out == readable_remote


def test_the_client_returns_the_same_object(server_url, capsys, monkeypatch):
    monkeypatch.delenv("PROPORTIO_URL", raising=False)
    with Client(server_url) as api:
        got = api.guardrail("100/10000", (105, 10000), 0.1, margin_type="relative", direction="lower-is-better",
                            metric="order errors")
    assert cli.main(["gate", "--control", "100/10000", "--treatment", "105/10000", "--margin", "0.1", "--relative",
                     "--lower-is-better", "--metric", "order errors", "--json"]) == 3
    assert json.loads(capsys.readouterr().out) == got
    assert got["verdict"] == "inconclusive" and got["additional_trials_per_group"] > 0


def test_file_mode_is_identical_through_the_service(tmp_path, capsys, monkeypatch, server_url):
    monkeypatch.delenv("PROPORTIO_URL", raising=False)
    path = tmp_path / "metrics.csv"
    path.write_text("name,control,treatment,margin,margin_type,direction\n"
                    "order errors,61/9630,58/9598,0.2,relative,lower-is-better\n"
                    "checkout completion,412/9630,471/9598,0.005,,\n"
                    "payment timeouts,20/9630,45/9598,0.001,,lower-is-better\n")
    for adjustment, code in (("holm", 3), ("none", 1)):
        argv = ["gate", "--file", str(path), "--adjustment", adjustment, "--json"]
        assert cli.main([*argv, "--url", server_url]) == code
        remote = capsys.readouterr().out
        assert cli.main(argv) == code
        assert capsys.readouterr().out == remote


def test_real_process_exit_codes(server_url, tmp_path):
    def gate(*argv):
        return subprocess.run([sys.executable, "-m", "proportio.cli", "gate", *argv], capture_output=True, text=True,
                              timeout=60)

    failing = gate("--control", "100/10000", "--treatment", "150/10000", "--margin", "0.1", "--relative",
                   "--lower-is-better", "--url", server_url)
    assert failing.returncode == 1 and failing.stdout.startswith("FAIL")
    down = gate("--control", "1/10", "--treatment", "1/10", "--margin", "0.1", "--url", "http://127.0.0.1:9",
                "--timeout", "1")
    assert down.returncode == 4 and "nothing was decided" in down.stderr


def test_the_endpoint_is_served(server_url):
    r = requests.post(server_url + "/v1/guardrail", json={
        "control": {"successes": 412, "trials": 9630}, "treatment": {"successes": 471, "trials": 9598},
        "margin": 0.005}, timeout=10)
    assert r.status_code == 200 and r.json()["verdict"] == "pass"
