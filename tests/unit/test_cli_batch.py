"""The commands batch, arms and allocation-check in their local mode: output, --json and exit codes."""

from __future__ import annotations

import json

import pytest

from proportio import cli

CSV = """label,control_successes,control_trials,treatment_successes,treatment_trials,method,alpha
checkout completion,412,9630,471,9598,,
add to basket,1210,9630,1175,9598,score,0.01
coupon use,38,9630,31,9598,,
"""
GROUPS = [{"label": "current", "successes": 412, "trials": 9630},
          {"label": "one-page", "successes": 471, "trials": 9598},
          {"label": "express", "successes": 455, "trials": 9611}]


@pytest.fixture
def csv_file(tmp_path):
    path = tmp_path / "comparisons.csv"
    path.write_text(CSV)
    return path


def as_batch_body(csv_text: str) -> dict:
    items = []
    for row in csv_text.strip().splitlines()[1:]:
        _, cs, cn, ts, tn, method, alpha = row.split(",")
        item = {"control": {"successes": int(cs), "trials": int(cn)},
                "treatment": {"successes": int(ts), "trials": int(tn)}}
        if method:
            item["method"] = method
        if alpha:
            item["alpha"] = float(alpha)
        items.append(item)
    return {"comparisons": items}


def test_batch_prints_one_line_per_comparison(capsys, csv_file):
    assert cli.main(["batch", "--file", str(csv_file), "--adjustment", "holm"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].startswith("checkout completion") and "z-pooled" in lines[0]
    assert lines[1].startswith("add to basket") and lines[1].endswith("score")
    assert lines[2].startswith("coupon use")
    assert lines[3].startswith("3 comparisons, adjustment holm")


def test_batch_json_equals_the_endpoint(capsys, client, csv_file):
    assert cli.main(["batch", "--file", str(csv_file), "--adjustment", "benjamini-hochberg", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    served = client.post("/v1/batch", json={**as_batch_body(CSV), "adjustment": "benjamini-hochberg"}).get_json()
    assert printed == served


def test_batch_reads_a_json_file(capsys, client, tmp_path):
    body = {**as_batch_body(CSV), "adjustment": "bonferroni"}
    path = tmp_path / "comparisons.json"
    path.write_text(json.dumps(body["comparisons"]))
    assert cli.main(["batch", "--file", str(path), "--adjustment", "bonferroni", "--json"]) == 0
    assert json.loads(capsys.readouterr().out) == client.post("/v1/batch", json=body).get_json()


@pytest.mark.parametrize(("text", "message"), [
    ("control_successes,control_trials,treatment_successes\n1,2,3\n", "missing treatment_trials"),
    ("control_successes,control_trials,treatment_successes,treatment_trials,colour\n1,2,3,4,red\n", "colour"),
    ("control_successes,control_trials,treatment_successes,treatment_trials\n1,2,x,4\n", "line 2"),
    ("control_successes,control_trials,treatment_successes,treatment_trials\n", "no comparisons"),
    ("control_successes,control_trials,treatment_successes,treatment_trials\n1,2,3,4\n5,6,70,8\n",
     "comparisons.1.treatment.successes"),
    ("control_successes,control_trials,treatment_successes,treatment_trials,method\n1,20,3,40,t-test\n",
     "comparisons.0.method"),
])
def test_batch_bad_files_exit_2_with_one_line(capsys, tmp_path, text, message):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    assert cli.main(["batch", "--file", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("proportio: ") and err.count("\n") == 1 and message in err


def test_batch_missing_file_exits_2(capsys, tmp_path):
    assert cli.main(["batch", "--file", str(tmp_path / "nope.csv")]) == 2
    assert "cannot read" in capsys.readouterr().err


def test_arms_prints_the_omnibus_and_each_pair(capsys, tmp_path):
    path = tmp_path / "groups.json"
    path.write_text(json.dumps(GROUPS))
    assert cli.main(["arms", "--file", str(path), "--comparisons", "all-pairs"]) == 0
    out = capsys.readouterr().out
    assert "omnibus" in out and "Bonferroni" in out
    assert "one-page vs current" in out and "express vs one-page" in out


def test_arms_json_equals_the_endpoint(capsys, client, tmp_path):
    path = tmp_path / "groups.json"
    path.write_text(json.dumps({"groups": GROUPS, "adjustment": "bonferroni"}))
    assert cli.main(["arms", "--file", str(path), "--control", "express", "--no-simultaneous", "--json"]) == 0
    served = client.post("/v1/arms", json={"groups": GROUPS, "adjustment": "bonferroni", "control": "express",
                                           "simultaneous_intervals": False}).get_json()
    assert json.loads(capsys.readouterr().out) == served


def test_arms_bad_input_exits_2(capsys, tmp_path):
    path = tmp_path / "groups.json"
    path.write_text(json.dumps(GROUPS[:1]))
    assert cli.main(["arms", "--file", str(path)]) == 2
    assert "groups" in capsys.readouterr().err


def test_allocation_check(capsys, client):
    assert cli.main(["allocation-check", "--observed", "50421,49087", "--labels", "current,one-page"]) == 0
    out = capsys.readouterr().out
    assert "should not be trusted" in out and "current: 50,421 observed" in out
    assert cli.main(["allocation-check", "--observed", "5021,4979", "--weights", "1,1", "--json"]) == 0
    served = client.post("/v1/allocation-check", json={"observed": [5021, 4979], "expected_weights": [1.0, 1.0]})
    assert json.loads(capsys.readouterr().out) == served.get_json()


@pytest.mark.parametrize("argv", [
    ["allocation-check", "--observed", "5021,4979", "--weights", "1,1,1"],
    ["allocation-check", "--observed", "5021"],
    ["allocation-check", "--observed", "5021,-3"],
])
def test_allocation_check_bad_input_exits_2(capsys, argv):
    assert cli.main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("proportio: ") and err.count("\n") == 1


def test_allocation_check_unparseable_list_is_a_usage_error():
    with pytest.raises(SystemExit) as exc:
        cli.main(["allocation-check", "--observed", "many,few"])
    assert exc.value.code == 2
