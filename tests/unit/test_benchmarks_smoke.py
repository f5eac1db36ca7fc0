"""The benchmark suite still runs: its in-process sections, shortened (no timing is asserted)."""

from __future__ import annotations

import pathlib
import re
import subprocess
import sys

ROOT = pathlib.Path(__file__).resolve().parents[2]


def test_quick_in_process_benchmarks_run_and_print_ratios():
    done = subprocess.run(
        [sys.executable, str(ROOT / "benchmarks" / "run_all.py"), "--quick", "--only", "mn,exact"],
        cwd=ROOT, capture_output=True, text=True, timeout=120,
    )
    assert done.returncode == 0, done.stderr[-2000:]
    lines = done.stdout.splitlines()
    # One line per measurement: what, ours, reference, ratio ("12.3x"), target, met.
    measured = [line for line in lines if re.search(r"\s\d[\d,.]*x\s", line)]
    assert any(line.startswith("difference: per interval") for line in measured), done.stdout
    assert any(line.startswith("50 per group") for line in measured), done.stdout
    assert any(re.search(r"\s(yes|no)\s", line) for line in measured), done.stdout


def test_breakdown_apps_answer_what_the_service_answers():
    """The --breakdown servers differ from the service in cost only: the same /v1/tests answer."""
    sys.path.insert(0, str(ROOT))
    try:
        from benchmarks import breakdown_apps

        from proportio import operations
        from proportio.api import create_app

        body = {"control": {"successes": 412, "trials": 9630}, "treatment": {"successes": 471, "trials": 9598}}
        expected = create_app().test_client().post("/v1/tests", json=body)
        computed = operations.run_test
        try:
            memoised = breakdown_apps.statistics_memoised().test_client()
            answers = [memoised.post("/v1/tests", json=body) for _ in range(2)]
        finally:
            operations.run_test = computed
        bare_hooks = breakdown_apps.without_hooks().test_client().post("/v1/tests", json=body)
    finally:
        sys.path.remove(str(ROOT))
    assert expected.status_code == 200
    for answer in [*answers, bare_hooks]:
        assert answer.status_code == 200 and answer.get_json() == expected.get_json()
    assert "X-Request-ID" in expected.headers and "X-Request-ID" not in bare_hooks.headers


def test_instruction_count_driver_serves_requests():
    """benchmarks/instructions.py's in-process part (what valgrind runs) still calls the app."""
    for which in ("ours", "bare"):
        done = subprocess.run([sys.executable, str(ROOT / "benchmarks" / "instructions.py"), "--serve", which, "3"],
                              cwd=ROOT, capture_output=True, text=True, timeout=120)
        assert done.returncode == 0, done.stderr[-2000:]
