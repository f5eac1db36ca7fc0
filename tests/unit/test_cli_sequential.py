"""`proportio sequential plan | analyze | always-valid` in local mode: output, --json and exit codes."""

from __future__ import annotations

import io
import json
import subprocess
import sys

import pytest

from proportio import cli

LOOKS3 = [
    {"control": {"successes": 169, "trials": 3974}, "treatment": {"successes": 192, "trials": 3969}},
    {"control": {"successes": 341, "trials": 7948}, "treatment": {"successes": 389, "trials": 7941}},
    {"control": {"successes": 510, "trials": 11917}, "treatment": {"successes": 588, "trials": 11911}},
]


@pytest.fixture
def looks_file(tmp_path):
    path = tmp_path / "looks.json"
    path.write_text(json.dumps(LOOKS3))
    return str(path)


def test_plan_prints_the_boundaries_and_the_sizes(capsys):
    assert cli.main(["sequential", "plan", "--looks", "5", "--baseline-rate", "0.043", "--expected-rate", "0.049"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("5 looks with obrien-fleming-type spending")
    assert "inflation factor" in out and "maximum trials" in out and "39,714 in all" in out


def test_plan_json_equals_the_endpoint(capsys, client):
    assert cli.main(["sequential", "plan", "--information-fractions", "0.3,0.6,1", "--spending", "hwang-shih-decani",
                     "--gamma", "-4", "--alternative", "greater", "--futility", "power-family", "--futility-rho",
                     "2", "--baseline-rate", "0.1", "--relative-effect", "0.2", "--allocation-ratio", "1.5",
                     "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    served = client.post("/v1/sequential/plan", json={
        "information_fractions": [0.3, 0.6, 1], "spending": "hwang-shih-decani", "gamma": -4,
        "alternative": "greater", "futility": {"spending": "power-family", "rho": 2}, "baseline_rate": 0.1,
        "relative_effect": 0.2, "allocation_ratio": 1.5}).get_json()
    assert printed == served
    assert printed["futility"]["rho"] == 2.0 and printed["max_sample_size"]["allocation_ratio"] == 1.5


def test_analyze_reads_the_looks_from_a_file(capsys, client, looks_file):
    assert cli.main(["sequential", "analyze", "--file", looks_file, "--max-trials", "39714"]) == 0
    out = capsys.readouterr().out
    assert "continue" in out and "2.553" in out
    assert cli.main(["sequential", "analyze", "--file", looks_file, "--max-trials", "39714", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    assert printed == client.post("/v1/sequential/analyze", json={"looks": LOOKS3, "max_trials": 39714}).get_json()


def test_analyze_file_may_hold_a_whole_request_and_options_override_it(capsys, client, tmp_path, monkeypatch):
    path = tmp_path / "request.json"
    path.write_text(json.dumps({"looks": LOOKS3, "max_trials": 30000, "spending": "pocock-type"}))
    assert cli.main(["sequential", "analyze", "--file", str(path), "--max-trials", "39714", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    served = client.post("/v1/sequential/analyze", json={"looks": LOOKS3, "max_trials": 39714,
                                                          "spending": "pocock-type"}).get_json()
    assert printed == served
    monkeypatch.setattr(sys, "stdin", io.StringIO(json.dumps(LOOKS3)))
    assert cli.main(["sequential", "analyze", "--file", "-", "--max-trials", "39714", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["decision"] == "continue"


def test_always_valid_json_equals_the_endpoint(capsys, client):
    assert cli.main(["sequential", "always-valid", "--control", "510/11917", "--treatment", "588/11911",
                     "--tuning", "19857", "--null-value", "-0.001", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    served = client.post("/v1/sequential/always-valid", json={
        "control": {"successes": 510, "trials": 11917}, "treatment": {"successes": 588, "trials": 11911},
        "tuning": 19857, "null_value": -0.001}).get_json()
    assert printed == served
    assert cli.main(["sequential", "always-valid", "--control", "510/11917", "--treatment", "588/11911"]) == 0
    assert "confidence sequence" in capsys.readouterr().out


@pytest.mark.parametrize(("argv", "needle"), [
    (["sequential", "plan", "--looks", "51"], "looks"),
    (["sequential", "plan", "--looks", "3", "--spending", "power-family"], "rho"),
    (["sequential", "plan", "--information-fractions", "0.5,0.4,1"], "information_fractions.1"),
    (["sequential", "plan", "--looks", "3", "--futility-gamma", "1"], "--futility"),
    (["sequential", "plan", "--looks", "3", "--expected-rate", "0.1"], "baseline_rate"),
    (["sequential", "plan", "--looks", "3", "--baseline-rate", "0.1", "--absolute-effect", "0"], "absolute_effect"),
    (["sequential", "analyze", "--file", "LOOKS", "--max-trials", "1"], "max_trials"),
    (["sequential", "analyze", "--file", "LOOKS"], "--max-trials"),
    (["sequential", "analyze", "--file", "BAD", "--max-trials", "100"], "looks.1.control.trials"),
    (["sequential", "analyze", "--file", "MISSING", "--max-trials", "100"], "cannot read"),
    (["sequential", "analyze", "--file", "NOTJSON", "--max-trials", "100"], "not valid JSON"),
    (["sequential", "always-valid", "--control", "11/10", "--treatment", "1/10"], "control.successes"),
    (["sequential", "always-valid", "--control", "1/10", "--treatment", "1/10", "--tuning", "0"], "tuning"),
])
def test_bad_input_exits_2_with_one_line(capsys, tmp_path, looks_file, argv, needle):
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps([
        {"control": {"successes": 1, "trials": 10}, "treatment": {"successes": 1, "trials": 10}},
        {"control": {"successes": 1, "trials": 9}, "treatment": {"successes": 1, "trials": 12}},
    ]))
    notjson = tmp_path / "notjson.json"
    notjson.write_text("{looks")
    files = {"LOOKS": looks_file, "BAD": str(bad), "MISSING": str(tmp_path / "absent.json"), "NOTJSON": str(notjson)}
    assert cli.main([files.get(a, a) for a in argv]) == 2
    err = capsys.readouterr().err
    assert err.startswith("proportio: ") and err.count("\n") == 1 and needle in err


@pytest.mark.parametrize("argv", [
    ["sequential", "plan", "--looks", "3", "--information-fractions", "0.5,1"],
    ["sequential", "plan"],
    ["sequential", "plan", "--information-fractions", "a,b"],
    ["sequential"],
])
def test_unusable_arguments_are_usage_errors(argv):
    with pytest.raises(SystemExit) as exc:
        cli.main(argv)
    assert exc.value.code == 2


def test_local_sequential_path_does_not_load_flask(looks_file):
    code = ("import sys; from proportio import cli; "
            f"cli.main(['sequential', 'analyze', '--file', {looks_file!r}, '--max-trials', '39714', '--json']); "
            "print('flask' in sys.modules, file=sys.stderr)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert proc.stderr.strip() == "False"
