"""`proportio plan` in its local mode: readable output, --json equal to the endpoint, exit codes."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from proportio import cli
from proportio.api import create_app
from proportio.stats import planning


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True}).test_client()


def test_plan_prints_the_summary_then_the_numbers(capsys):
    assert cli.main(["plan", "--baseline", "0.043", "--expected", "0.049"]) == 0
    lines = capsys.readouterr().out.splitlines()
    expected = planning.plan(0.043, expected_rate=0.049)
    assert lines[0] == expected.summary
    assert lines[1].split() == ["n_control", f"{expected.n_control:,}"]
    assert any(line.split()[:2] == ["n_total", f"{expected.n_total:,}"] for line in lines)
    assert any(line.strip().startswith("formula") for line in lines)


@pytest.mark.parametrize(("argv", "body"), [
    (["--expected", "0.049"], {"expected_rate": 0.049}),
    (["--absolute-effect", "0.006", "--power", "0.9", "--alpha", "0.01", "--alternative", "greater",
      "--allocation-ratio", "2", "--method", "z-unpooled", "--continuity-correction"],
     {"absolute_effect": 0.006, "power": 0.9, "alpha": 0.01, "alternative": "greater", "allocation_ratio": 2.0,
      "method": "z-unpooled", "continuity_correction": True}),
    (["--relative-effect", "0.1", "--solve-for", "power", "--n-control", "9630", "--n-treatment", "9598"],
     {"relative_effect": 0.1, "solve_for": "power", "n_control": 9630, "n_treatment": 9598}),
    (["--solve-for", "effect", "--n-control", "9630", "--design", "non-inferiority", "--margin", "0.005",
      "--alternative", "greater"],
     {"solve_for": "effect", "n_control": 9630, "design": "non-inferiority", "margin": 0.005,
      "alternative": "greater"}),
    (["--expected", "0.045", "--design", "equivalence", "--margin", "0.01"],
     {"expected_rate": 0.045, "design": "equivalence", "margin": 0.01}),
    (["--expected", "0.049", "--solve-for", "power", "--sweep-parameter", "n_control", "--sweep-values",
      "5000,10000,20000"],
     {"expected_rate": 0.049, "solve_for": "power", "sweep": {"parameter": "n_control",
                                                              "values": [5000, 10000, 20000]}}),
    (["--sweep-parameter", "relative_effect", "--sweep-values", "0.1, 0.15,0.2"],
     {"sweep": {"parameter": "relative_effect", "values": [0.1, 0.15, 0.2]}}),
])
def test_json_output_equals_the_endpoint(capsys, client, argv, body):
    assert cli.main(["plan", "--baseline", "0.043", *argv, "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    served = client.post("/v1/sample-size", json={"baseline_rate": 0.043, **body})
    assert served.status_code == 200
    assert printed == served.get_json()


def test_sweep_prints_a_table(capsys):
    assert cli.main(["plan", "--baseline", "0.043", "--expected", "0.049", "--sweep-parameter", "power",
                     "--sweep-values", "0.8,0.9"]) == 0
    lines = capsys.readouterr().out.splitlines()
    curve = planning.sweep("power", [0.8, 0.9], baseline_rate=0.043, expected_rate=0.049)
    assert lines[0].startswith("2 plans with power from 80% to 90%")
    assert lines[1].split()[:2] == ["target_power", "n_control"]
    assert [line.split()[1] for line in lines[2:4]] == [f"{p.n_control:,}" for p in curve]


@pytest.mark.parametrize(("argv", "names"), [
    (["--expected", "0.049", "--absolute-effect", "0.006"], ["expected_rate", "absolute_effect"]),
    (["--expected", "1.2"], ["expected_rate"]),
    (["--expected", "0.043"], ["expected_rate"]),
    (["--expected", "0.049", "--power", "1.5"], ["power"]),
    (["--expected", "0.043", "--design", "equivalence"], ["margin"]),
    (["--expected", "0.049", "--design", "equivalence", "--margin", "0.005"], ["margin"]),
    (["--expected", "0.049", "--solve-for", "power"], ["n_control"]),
    (["--expected", "0.0430001"], ["trials per group"]),
    (["--expected", "0.049", "--power", "nan"], ["power"]),
    (["--sweep-parameter", "expected_rate", "--sweep-values", "0.05,0.06,0.07,2"], ["sweep.values.3"]),
    (["--expected", "0.049", "--sweep-parameter", "expected_rate", "--sweep-values", "0.05"], ["expected_rate"]),
    (["--expected", "0.049", "--sweep-parameter", "power"], ["--sweep-values"]),
])
def test_bad_input_exits_2_with_one_line(capsys, argv, names):
    assert cli.main(["plan", "--baseline", "0.043", *argv]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.startswith("proportio: ") and captured.err.count("\n") == 1
    for name in names:
        assert name in captured.err


@pytest.mark.parametrize("argv", [
    ["plan", "--baseline", "0.043", "--expected", "0.049", "--solve-for", "power", "--n-control", "1.5"],
    ["plan", "--baseline", "0.043", "--sweep-parameter", "expected_rate", "--sweep-values", "0.05,abc"],
    ["plan", "--expected", "0.049"],
])
def test_unparseable_arguments_are_usage_errors(capsys, argv):
    with pytest.raises(SystemExit) as exc:
        cli.main(argv)
    assert exc.value.code == 2


def test_local_plan_does_not_load_flask():
    code = ("import sys; from proportio import cli; "
            "cli.main(['plan', '--baseline', '0.043', '--expected', '0.049', '--json']); "
            "print('flask' in sys.modules, file=sys.stderr)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert proc.stderr.strip() == "False"
    assert json.loads(proc.stdout)["n_control"] == planning.plan(0.043, expected_rate=0.049).n_control
