"""`proportio gate` in its local mode: every exit code, --json equal to the endpoint, --file with adjustment."""

from __future__ import annotations

import json

import pytest

from proportio import cli
from proportio.cli import guardrail as gate
from proportio.client import Client, ProportioError
from proportio.stats.multiplicity import adjust_p_values

PASS = ["--control", "412/9630", "--treatment", "471/9598", "--margin", "0.005"]
FAIL = ["--control", "100/10000", "--treatment", "150/10000", "--margin", "0.1", "--relative", "--lower-is-better"]
INCONCLUSIVE = ["--control", "100/10000", "--treatment", "105/10000", "--margin", "0.1", "--relative",
                "--lower-is-better"]


@pytest.fixture(autouse=True)
def _no_service_from_the_environment(monkeypatch):
    monkeypatch.delenv("PROPORTIO_URL", raising=False)


def one_line_error(capsys) -> str:
    err = capsys.readouterr().err
    assert err.startswith("proportio gate: ") and err.count("\n") == 1, err
    return err


@pytest.mark.parametrize(("argv", "code", "word"), [
    (PASS, 0, "PASS"),
    (FAIL, 1, "FAIL"),
    (INCONCLUSIVE, 3, "INCONCLUSIVE"),
    (INCONCLUSIVE + ["--on-inconclusive", "pass"], 0, "INCONCLUSIVE"),
    (INCONCLUSIVE + ["--on-inconclusive", "fail"], 1, "INCONCLUSIVE"),
    (FAIL + ["--on-inconclusive", "pass"], 1, "FAIL"),
    # lower is better, absolute margin: payment timeouts up from 0.21% to 0.47%, margin 0.1 points.
    (["--control", "20/9630", "--treatment", "45/9598", "--margin", "0.001", "--lower-is-better"], 1, "FAIL"),
    # higher is better, relative margin: a success rate near 1 within 15%.
    (["--control", "188/200", "--treatment", "190/200", "--margin", "0.15", "--relative"], 0, "PASS"),
])
def test_exit_code_is_the_verdict(capsys, argv, code, word):
    assert cli.main(["gate", *argv]) == code
    out = capsys.readouterr().out
    assert out.startswith(word + "  ")


def test_readable_output_names_the_test_interval_and_more_trials(capsys):
    assert cli.main(["gate", *INCONCLUSIVE, "--metric", "order errors"]) == 3
    out = capsys.readouterr().out
    assert "Inconclusive (order errors)" in out
    assert "score at ratio 1.1 (less)" in out and "ratio 90% [" in out and "margin +10% relative" in out
    assert "more trials per group" in out and "  more        about " in out


@pytest.mark.parametrize("argv", [PASS, FAIL, INCONCLUSIVE,
                                  ["--control", "0/50", "--treatment", "0/50", "--margin", "0.2", "--relative"],
                                  ["--control", "5/9", "--treatment", "1/1", "--margin", "0.3", "--alpha", "0.1"]])
def test_json_is_the_object_the_endpoint_returns(capsys, client, argv):
    code = cli.main(["gate", *argv, "--json", "--metric", "m"])
    printed = json.loads(capsys.readouterr().out)
    args = dict(zip(argv[::2], argv[1::2], strict=False))
    flags = set(argv)
    payload = {"control": _group(args["--control"]), "treatment": _group(args["--treatment"]),
               "margin": float(args["--margin"]), "metric": "m"}
    if "--relative" in flags:
        payload["margin_type"] = "relative"
    if "--lower-is-better" in flags:
        payload["direction"] = "lower-is-better"
    if "--alpha" in args:
        payload["alpha"] = float(args["--alpha"])
    served = client.post("/v1/guardrail", json=payload).get_json()
    assert printed == served
    assert code == gate.VERDICT_EXIT[served["verdict"]]


def _group(text: str) -> dict:
    s, n = text.split("/")
    return {"successes": int(s), "trials": int(n)}


@pytest.mark.parametrize("argv", [
    ["--control", "48/10", "--treatment", "5/10", "--margin", "0.1"],           # successes above trials
    ["--control", "4/10", "--treatment", "5/10", "--margin", "0"],              # margin not positive
    ["--control", "4/10", "--treatment", "5/10", "--margin", "1.5"],            # absolute margin >= 1
    ["--control", "4/10", "--treatment", "5/10", "--margin", "1.5", "--relative"],
    ["--control", "4/10", "--treatment", "5/10", "--margin", "nan"],
    ["--control", "4/10", "--treatment", "5/10", "--margin", "0.1", "--alpha", "0.7"],
    ["--control", "4/10", "--treatment", "5/10"],                               # no margin
    ["--control", "4/10", "--margin", "0.1"],                                   # no treatment
    ["--control", "4/10", "--treatment", "5/10", "--margin", "0.1", "--file", "x.csv"],
    ["--file", "/nonexistent/metrics.csv"],
])
def test_bad_arguments_exit_2_with_one_line(capsys, argv):
    assert cli.main(["gate", *argv]) == 2
    one_line_error(capsys)


@pytest.mark.parametrize("argv", [
    ["--control", "abc", "--treatment", "5/10", "--margin", "0.1"],
    ["--control", "4/10", "--treatment", "5/10", "--margin", "x"],
    ["--control", "4/10", "--treatment", "5/10", "--margin", "0.1", "--bogus"],
    ["--control", "4/10", "--treatment", "5/10", "--margin", "0.1", "--adjustment", "sidak"],
    ["--control", "4/10", "--treatment", "5/10", "--margin", "0.1", "--on-inconclusive", "maybe"],
    ["--control", "4/10", "--treatment", "5/10", "--margin", "0.1", "--local", "--url", "http://x"],
])
def test_unparseable_arguments_exit_2_with_one_line(capsys, argv):
    with pytest.raises(SystemExit) as exc:
        cli.main(["gate", *argv])
    assert exc.value.code == 2
    one_line_error(capsys)


# ------------------------------------------------------------------------------------ the service side


def test_unreachable_service_exits_4(capsys):
    argv = ["gate", *PASS, "--url", "http://127.0.0.1:9", "--timeout", "1"]
    real_init = Client.__init__

    def fast(self, *args, **kwargs):
        real_init(self, *args, **{**kwargs, "retries": 0})

    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(Client, "__init__", fast)
        assert cli.main(argv) == 4
    assert "nothing was decided" in one_line_error(capsys)


@pytest.mark.parametrize(("status", "code"), [(500, 4), (503, 4), (404, 4), (422, 2), (401, 2), (413, 2)])
def test_service_errors_exit_4_and_request_errors_exit_2(capsys, monkeypatch, status, code):
    def answer(self, method, path, body=None):
        raise ProportioError(status, "Error", "something", {"margin": ["bad"]} if status == 422 else {})

    monkeypatch.setattr(Client, "request", answer)
    assert cli.main(["gate", *PASS, "--url", "http://127.0.0.1:8000"]) == code
    one_line_error(capsys)


def test_proportio_url_selects_the_service_and_local_overrides_it(capsys, monkeypatch, client):
    calls = []

    def answer(self, method, path, body=None):
        calls.append(path)
        return client.post(path, json=body).get_json()

    monkeypatch.setattr(Client, "request", answer)
    monkeypatch.setenv("PROPORTIO_URL", "http://127.0.0.1:8000")
    assert cli.main(["gate", *PASS, "--json"]) == 0
    remote = capsys.readouterr().out
    assert calls == ["/v1/guardrail"]
    assert cli.main(["gate", *PASS, "--json", "--local"]) == 0
    assert capsys.readouterr().out == remote and calls == ["/v1/guardrail"]


def test_an_unexpected_error_is_never_read_as_fail(capsys, monkeypatch, tmp_path):
    def broken(*args, **kwargs):
        raise RuntimeError("boom")

    monkeypatch.setattr(gate.core, "adjust_verdicts", broken)
    path = tmp_path / "metrics.json"
    path.write_text(json.dumps([{"name": "a", "control": "4/10", "treatment": "5/10", "margin": 0.1}]))
    assert cli.main(["gate", "--file", str(path)]) == 4
    one_line_error(capsys)


# ------------------------------------------------------------------------------------ several metrics

CSV = """name,control,treatment,margin,margin_type,direction
order errors,61/9630,58/9598,0.2,relative,lower-is-better
checkout completion,412/9630,471/9598,0.005,,
payment timeouts,20/9630,45/9598,0.001,,lower-is-better
page crash,5/9630,6/9598,,relative,lower-is-better
"""


@pytest.fixture
def metrics_csv(tmp_path):
    path = tmp_path / "metrics.csv"
    path.write_text(CSV)
    return str(path)


def test_file_mode_adjusts_both_tails_and_exits_with_the_worst(capsys, metrics_csv):
    assert cli.main(["gate", "--file", metrics_csv, "--margin", "0.5", "--json"]) == 3
    report = json.loads(capsys.readouterr().out)
    metrics = report["metrics"]
    assert [m["metric"] for m in metrics] == ["order errors", "checkout completion", "payment timeouts", "page crash"]
    raw_p = [m["result"]["test"]["p_value"] for m in metrics]
    raw_q = [m["result"]["test"]["inferiority_p_value"] for m in metrics]
    assert [m["adjusted_p_value"] for m in metrics] == list(adjust_p_values(raw_p, "holm"))
    assert [m["adjusted_inferiority_p_value"] for m in metrics] == list(adjust_p_values(raw_q, "holm"))
    # Unadjusted, payment timeouts fail (p 0.025); Holm over 4 (x4 = 0.0999) leaves them inconclusive.
    assert metrics[2]["result"]["verdict"] == "fail" and metrics[2]["verdict"] == "inconclusive"
    assert [m["verdict"] for m in metrics] == ["inconclusive", "pass", "inconclusive", "inconclusive"]
    assert report["verdict"] == "inconclusive" and report["adjustment"] == "holm"
    assert report["planning_alpha"] == pytest.approx(0.05 / 4)
    # The blank margin took --margin; the blank direction took the default.
    assert metrics[3]["result"]["margin"] == 0.5 and metrics[1]["result"]["direction"] == "higher-is-better"
    # Inconclusive with a favourable estimate: more trials planned at alpha/4; beyond the margin: none.
    assert metrics[0]["additional_trials_per_group"] > metrics[0]["result"]["additional_trials_per_group"]
    assert metrics[2]["additional_trials_per_group"] is None and metrics[2]["warnings"]


def test_file_mode_without_adjustment_fails(capsys, metrics_csv):
    assert cli.main(["gate", "--file", metrics_csv, "--margin", "0.5", "--adjustment", "none"]) == 1
    lines = capsys.readouterr().out.splitlines()
    assert len(lines) == 5
    assert lines[2].startswith("FAIL") and "payment timeouts" in lines[2]
    assert lines[1].startswith("PASS") and "checkout completion" in lines[1]
    assert lines[-1].startswith("gate: fail (1 pass, 1 fail, 2 inconclusive; no adjustment over 4 metrics")


def test_file_mode_on_inconclusive_pass(capsys, metrics_csv):
    assert cli.main(["gate", "--file", metrics_csv, "--margin", "0.5", "--on-inconclusive", "pass"]) == 0
    assert cli.main(["gate", "--file", metrics_csv, "--margin", "0.5", "--on-inconclusive", "fail"]) == 1


def test_json_file_equals_csv_file(capsys, tmp_path, metrics_csv):
    rows = [{"name": "order errors", "control": {"successes": 61, "trials": 9630}, "treatment": "58/9598",
             "margin": 0.2, "margin_type": "relative", "direction": "lower-is-better"},
            {"name": "checkout completion", "control": "412/9630", "treatment": "471/9598", "margin": 0.005},
            {"name": "payment timeouts", "control": "20/9630", "treatment": "45/9598", "margin": 0.001,
             "direction": "lower-is-better"},
            {"name": "page crash", "control": "5/9630", "treatment": "6/9598", "margin_type": "relative",
             "direction": "lower-is-better"}]
    path = tmp_path / "metrics.json"
    path.write_text(json.dumps({"metrics": rows}))
    assert cli.main(["gate", "--file", str(path), "--margin", "0.5", "--json"]) == 3
    from_json = json.loads(capsys.readouterr().out)
    assert cli.main(["gate", "--file", metrics_csv, "--margin", "0.5", "--json"]) == 3
    assert json.loads(capsys.readouterr().out) == from_json


@pytest.mark.parametrize(("name", "text", "message"), [
    ("m.csv", "name,control,treatment,margin\na,4/10,5/10,0.1\na,4/10,5/10,0.1\n", "used twice"),
    ("m.csv", "name,control,treatment\na,4/10,5/10\n", "margin is required"),
    ("m.csv", "name,control,treatment,margin\na,four/10,5/10,0.1\n", "control"),
    ("m.csv", "name,control,treatment,margin,colour\na,4/10,5/10,0.1,red\n", "header"),
    ("m.csv", "name,control,treatment,margin\na,4/10,5/10,wide\n", "margin must be a number"),
    ("m.csv", "name,control,treatment,margin\na,40/10,5/10,0.1\n", 'metric "a": control.successes'),
    ("m.csv", "name,control,treatment,margin\n", "no metrics"),
    ("m.csv", "name,control,treatment,margin\n,4/10,5/10,0.1\n", "name is required"),
    ("m.json", '[{"name": "a", "control": "4/10", "treatment": "5/10", "margin": "0.1"}]', 'metric "a": margin'),
    ("m.json", '[{"name": "a", "control": "4/10", "treatment": "5/10", "margin": 0.1, "alpha": 0.1}]', "alpha"),
    ("m.json", '{"name": "a"}', "list of metric objects"),
    ("m.json", "[{", "not valid JSON"),
    ("m.json", '[{"name": "a", "treatment": "5/10", "margin": 0.1}]', "control is required"),
    ("m.json", '[{"name": "a", "control": "4/10", "treatment": "5/10", "margin": 1.2, "margin_type": "relative"}]',
     "margin"),
])
def test_bad_files_exit_2_with_one_line(capsys, tmp_path, name, text, message):
    path = tmp_path / name
    path.write_text(text)
    assert cli.main(["gate", "--file", str(path)]) == 2
    assert message in one_line_error(capsys)


def test_worst_code_order():
    assert gate.exit_code(["pass", "inconclusive", "pass"]) == 3
    assert gate.exit_code(["pass", "inconclusive", "fail"]) == 1
    assert gate.exit_code(["pass", "pass"]) == 0
    assert gate.exit_code(["inconclusive", "pass"], "pass") == 0
    assert gate.exit_code(["inconclusive", "pass"], "fail") == 1
