"""The command line in its local mode: output, --json and exit codes."""

from __future__ import annotations

import json

import pytest

from proportio import cli


def test_test_command_prints_a_summary(capsys):
    assert cli.main(["test", "--control", "480/10000", "--treatment", "560/10000"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("Treatment 5.60% vs control 4.80%")
    assert "z-pooled" in out


def test_test_command_json_equals_the_endpoint(capsys, client):
    assert cli.main(["test", "--control", "480/10000", "--treatment", "560/10000", "--method", "score",
                     "--null-value", "-0.002", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    served = client.post("/v1/tests", json={"control": {"successes": 480, "trials": 10000},
                                            "treatment": {"successes": 560, "trials": 10000},
                                            "method": "score", "null_value": -0.002}).get_json()
    assert printed == served


def test_interval_command(capsys):
    assert cli.main(["interval", "--effect", "proportion", "--group", "0/20", "--method", "clopper-pearson"]) == 0
    assert "clopper-pearson" in capsys.readouterr().out


@pytest.mark.parametrize("argv", [
    ["test", "--control", "48/10", "--treatment", "5/10"],
    ["test", "--control", "4/10", "--treatment", "5/10", "--method", "nope"],
    ["interval", "--effect", "proportion"],
])
def test_bad_counts_and_options_exit_2_with_one_line(capsys, argv):
    assert cli.main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("proportio: ") and err.count("\n") == 1


def test_unparseable_group_is_a_usage_error(capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(["test", "--control", "abc", "--treatment", "5/10"])
    assert exc.value.code == 2
