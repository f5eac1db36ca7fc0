"""Instructions per POST /v1/tests, in-process: a measure of a request's cost that the machine's load cannot blur.

    python benchmarks/instructions.py              # the service and the bare endpoint
    python benchmarks/instructions.py ours         # one of: ours, bare, statistics_memoised, without_hooks
    python benchmarks/instructions.py --repeat 5 ours

Runs this file under ``valgrind --tool=callgrind`` (which counts instructions, not seconds), calling the
WSGI app directly 100 and 1,100 times with the benchmark's body, and takes the difference divided by
1,000: the instructions one request costs, without interpreter start-up and imports. It does so
``--repeat`` times (default 3) per app and prints the median and the range. Single runs of the same code
differ by up to about 5% (what a request does depends a little on time: the latency bucket, the log
line's clock, when the timestamp is re-formatted), far less than wall-clock ratios on a shared machine,
but enough that a change of a few per cent needs the medians of several runs before and after. A
diagnostic; the bars themselves are measured by run_all.py. Needs valgrind (Debian: ``apt-get install
valgrind``).
"""

from __future__ import annotations

import io
import json
import os
import pathlib
import re
import shutil
import statistics
import subprocess
import sys
import tempfile

ROOT = pathlib.Path(__file__).resolve().parents[1]
APPS = ("ours", "bare", "statistics_memoised", "without_hooks")
BODY = {"control": {"successes": 412, "trials": 9630, "label": "current checkout"},
        "treatment": {"successes": 471, "trials": 9598, "label": "one-page checkout"}}


def serve(which: str, count: int) -> None:
    """Call the app ``count`` times in this process (what valgrind measures)."""
    sys.path[:0] = [str(ROOT / "service"), str(ROOT)]
    # As under gunicorn: counters in a multiprocess directory, one JSON access line per request.
    os.environ["PROMETHEUS_MULTIPROC_DIR"] = tempfile.mkdtemp(prefix="proportio-instructions-")
    from proportio import logging_json

    logging_json.configure("INFO")
    logging_json._handler.stream = open(os.devnull, "w")  # noqa: SIM115 - lives as long as the process
    if which == "bare":
        from benchmarks.bare_app import create_app
    elif which == "ours":
        from proportio.api import create_app
    else:
        from benchmarks import breakdown_apps

        create_app = getattr(breakdown_apps, which)
    app = create_app()
    body = json.dumps(BODY).encode()

    def start_response(status, headers, exc_info=None):
        if not status.startswith("200"):
            raise SystemExit(f"POST /v1/tests answered {status}")

    for _ in range(count):
        environ = {"REQUEST_METHOD": "POST", "PATH_INFO": "/v1/tests", "SERVER_NAME": "localhost",
                   "SERVER_PORT": "80", "SERVER_PROTOCOL": "HTTP/1.1", "wsgi.url_scheme": "http",
                   "CONTENT_TYPE": "application/json", "CONTENT_LENGTH": str(len(body)),
                   "wsgi.input": io.BytesIO(body), "wsgi.errors": sys.stderr}
        b"".join(app(environ, start_response))
    shutil.rmtree(os.environ["PROMETHEUS_MULTIPROC_DIR"], ignore_errors=True)


def count_instructions(which: str, count: int) -> int:
    with tempfile.TemporaryDirectory() as tmp:
        done = subprocess.run(
            ["valgrind", "--tool=callgrind", f"--callgrind-out-file={tmp}/out", sys.executable, __file__,
             "--serve", which, str(count)],
            cwd=ROOT, env={**os.environ, "PYTHONHASHSEED": "0"}, capture_output=True, text=True, check=True)
    return int(re.search(r"Collected : (\d+)", done.stderr).group(1))


def main(argv: list[str]) -> int:
    if argv[:1] == ["--serve"]:
        serve(argv[1], int(argv[2]))
        return 0
    if shutil.which("valgrind") is None:
        print("valgrind is not on PATH (Debian: apt-get install valgrind)", file=sys.stderr)
        return 2
    repeat = 3
    if argv[:1] == ["--repeat"]:
        repeat, argv = int(argv[1]), argv[2:]
    chosen = argv or ["ours", "bare"]
    unknown = sorted(set(chosen) - set(APPS))
    if unknown or repeat < 1:
        print(f"unknown app(s) {unknown}; choose from {', '.join(APPS)}; --repeat needs 1 or more", file=sys.stderr)
        return 2
    for which in chosen:
        runs = [(count_instructions(which, 1_100) - count_instructions(which, 100)) / 1_000 for _ in range(repeat)]
        print(f"{which:<20} {statistics.median(runs):>12,.0f} instructions per request, median of {repeat} "
              f"(range {min(runs):,.0f} to {max(runs):,.0f}; in-process, WSGI app called directly)")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
