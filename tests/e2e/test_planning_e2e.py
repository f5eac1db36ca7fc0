"""POST /v1/sample-size end to end through a real gunicorn: the client and the CLI's --url mode."""

from __future__ import annotations

import dataclasses
import json

import pytest
import requests

from proportio import cli
from proportio.client import Client, ProportioError
from proportio.stats import planning

pytestmark = pytest.mark.e2e


def as_json(result: planning.PlanResult) -> dict:
    return {**dataclasses.asdict(result), "warnings": list(result.warnings)}


def test_client_size_power_effect_and_sweep(server_url):
    with Client(server_url) as api:
        size = api.sample_size(0.043, expected_rate=0.049)
        assert size == as_json(planning.plan(0.043, expected_rate=0.049))
        power = api.sample_size(0.043, relative_effect=0.1, solve_for="power", n_control=9630, n_treatment=9598)
        assert power == as_json(planning.plan(0.043, relative_effect=0.1, solve_for="power", n_control=9630,
                                              n_treatment=9598))
        effect = api.sample_size(0.043, solve_for="effect", n_control=9630, design="non-inferiority", margin=0.005,
                                 alternative="greater")
        assert effect["absolute_effect"] < 0.005 and effect["power"] >= 0.8
        curve = api.sample_size(0.043, expected_rate=0.049, solve_for="power",
                                sweep=("n_control", [5000, 10000, 20000]))
        assert [p["power"] for p in curve["curve"]] == [
            p.power for p in planning.sweep("n_control", [5000, 10000, 20000], baseline_rate=0.043,
                                            expected_rate=0.049, solve_for="power")]
        same = api.sample_size(0.043, expected_rate=0.049, solve_for="power",
                               sweep={"parameter": "n_control", "values": [5000, 10000, 20000]})
        assert same == curve


def test_client_raises_a_problem_naming_each_field(server_url):
    with Client(server_url) as api, pytest.raises(ProportioError) as exc:
        api.sample_size(0.043, expected_rate=0.049, absolute_effect=0.006)
    assert exc.value.status == 422
    assert set(exc.value.errors) == {"expected_rate", "absolute_effect"}
    with Client(server_url) as api, pytest.raises(ProportioError) as exc:
        api.sample_size(0.043, sweep=("expected_rate", [0.05, 0.06, 0.07, 1.5]))
    assert set(exc.value.errors) == {"sweep.values.3"}


def test_cli_url_mode_prints_what_the_service_returns(server_url, capsys):
    # In-process (the subprocess path of --url is covered by test_server.py); the request goes to gunicorn.
    argv = ["plan", "--baseline", "0.043", "--expected", "0.049", "--sweep-parameter", "power", "--sweep-values",
            "0.8,0.9", "--url", server_url, "--json"]
    assert cli.main(argv) == 0
    served = requests.post(server_url + "/v1/sample-size", json={
        "baseline_rate": 0.043, "expected_rate": 0.049, "sweep": {"parameter": "power", "values": [0.8, 0.9]}},
        timeout=10).json()
    assert json.loads(capsys.readouterr().out) == served


def test_cli_url_mode_bad_input_exits_2(server_url, capsys):
    argv = ["plan", "--baseline", "0.043", "--expected", "0.049", "--design", "equivalence", "--url", server_url]
    assert cli.main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("proportio: margin: required when design is") and err.count("\n") == 1
