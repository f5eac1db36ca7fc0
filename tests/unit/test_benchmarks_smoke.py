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
