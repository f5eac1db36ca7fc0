"""Every performance bar of DESIGN.md section 5, measured side by side with its reference in one run.

    make bench                                   # or, without make:
    python benchmarks/run_all.py                 # everything, about 3 minutes on 2 cores
    python benchmarks/run_all.py --quick         # a smoke run, well under a minute
    python benchmarks/run_all.py --only mn,exact # some sections: http, batch, mn, exact, startup
    python benchmarks/run_all.py --only http --breakdown  # where the gap to the bare endpoint lies

Absolute times drift on shared machines; a ratio of two timings taken minutes apart on the same machine
holds much better, so every line prints ours, the reference, their ratio, the target and whether it is met.
Every ratio reads "higher is better": the reference's time over ours, or our throughput over the
reference's. Sections:

http     POST /v1/tests served by the service's gunicorn command and configuration (docker/gunicorn.conf.py,
         as tests/gunicorn_server.py starts it) against a bare Flask JSON endpoint (benchmarks/bare_app.py) under
         the same command, settings and worker count; both servers run at once and a real HTTP load
         generator (wrk if it is on PATH, else threads with http.client) alternates between them, A B A B.
         With --breakdown, two more servers of the service join the rotation, one with its statistics
         memoised and one without its request hooks (benchmarks/breakdown_apps.py).
batch    POST /v1/batch with 1 to 100,000 comparisons end to end against a loop of statsmodels'
         proportions_ztest (benchmarks/bench_batch.py).
mn       Miettinen-Nurminen score intervals, vectorised over 10,000 random tables, against statsmodels'
         confint_proportions_2indep(method="score") called per interval (timed on a few hundred, scaled).
exact    Boschloo's exact test at 50, 300 and 1,000 trials per group against scipy.stats.boschloo_exact
         (benchmarks/bench_exact.py; scipy takes tens of seconds at 1,000 and is run once).
startup  Time from process start to the first answered /v1/tests request (gunicorn, one worker); import time
         of the statistics core against the web layer; `proportio gate --local` against `python -c pass`,
         and whether it loads Flask (a CI job that only gates should not).
"""

from __future__ import annotations

import argparse
import http.client
import json
import math
import os
import pathlib
import platform
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import warnings

import bench_batch
import bench_exact
import numpy as np

ROOT = pathlib.Path(__file__).resolve().parents[1]
SECTIONS = ("http", "batch", "mn", "exact", "startup")
BARE_APP = "benchmarks.bare_app:create_app()"
# --breakdown: the service with one part of its cost taken away (benchmarks/breakdown_apps.py).
BREAKDOWN_APPS = {
    "statistics memoised": "benchmarks.breakdown_apps:statistics_memoised()",
    "without request hooks": "benchmarks.breakdown_apps:without_hooks()",
}
# The README's worked example: the body every HTTP request of the http section sends.
TEST_BODY = {
    "control": {"successes": 412, "trials": 9630, "label": "current checkout"},
    "treatment": {"successes": 471, "trials": 9598, "label": "one-page checkout"},
}
GATE_ARGS = ["gate", "--local", "--control", "1210/50000", "--treatment", "1187/49800", "--margin", "0.005",
             "--lower-is-better"]
HEADER = f"{'what':<50} {'ours':>12} {'reference':>12} {'ratio':>8} {'target':>7} {'met':>4}  note"


# ------------------------------------------------------------------------------------------------
# Output


def row(what: str, ours: str, reference: str, ratio: float | None, target: float | str | None = None,
        note: str = "", met: bool | None = None) -> None:
    """Print one result line; ``ratio`` and a numeric ``target`` read "higher is better".

    A target that is not a ratio (text) needs ``met`` given.
    """
    ratio_text = "-" if ratio is None else f"{ratio:.2f}x" if ratio < 10 else f"{ratio:.0f}x"
    if isinstance(target, str):
        target_text = target
    else:
        target_text = "-" if target is None else f">={target:g}" if target < 1 else f"{target:g}x"
        if met is None and target is not None and ratio is not None:
            met = ratio >= target
    met_text = "-" if met is None else "yes" if met else "no"
    print(f"{what:<50} {ours:>12} {reference:>12} {ratio_text:>8} {target_text:>7} {met_text:>4}  {note}".rstrip(),
          flush=True)


def section(title: str) -> None:
    print(f"\n{title}\n{'-' * len(HEADER)}", flush=True)


def us(seconds: float) -> str:
    return f"{1e6 * seconds:,.1f} us" if seconds < 1e-3 else f"{1e3 * seconds:,.2f} ms" if seconds < 1 \
        else f"{seconds:,.2f} s"


def machine() -> str:
    model = "unknown CPU"
    try:
        for line in pathlib.Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                model = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return (f"{os.cpu_count()} CPUs ({model}), Python {platform.python_version()}, numpy {np.__version__}, "
            f"{platform.system()} {platform.release()}")


# ------------------------------------------------------------------------------------------------
# Servers and load


def start_server(app: str | None, workers: int, env: dict[str, str] | None = None):
    """Start gunicorn exactly as tests/gunicorn_server.py does, serving ``app`` (None: the service)."""
    helpers = bench_batch._e2e_helpers()  # a fresh copy of the module: patching it touches nothing else
    if app is not None:
        command = helpers.container_command
        helpers.container_command = lambda: [*command()[:-1], app]
    proc, url = helpers.start_server(env, workers=workers)
    return helpers, proc, url


def wrk_round(url: str, script: str, seconds: float, connections: int) -> dict:
    out = subprocess.run(
        ["wrk", "-t1", f"-c{connections}", f"-d{max(1, round(seconds))}s", "--latency", "-s", script,
         url + "/v1/tests"], capture_output=True, text=True, check=True, timeout=seconds + 60).stdout
    rate = float(re.search(r"Requests/sec:\s+([\d.]+)", out).group(1))
    errors = re.search(r"Non-2xx or 3xx responses: (\d+)", out)
    socket_errors = re.search(r"Socket errors: (.*)", out)

    def pct(p: int) -> float:
        value, unit = re.search(rf"^\s+{p}%\s+([\d.]+)(us|ms|s)\s*$", out, re.M).groups()
        return float(value) * {"us": 1e-6, "ms": 1e-3, "s": 1.0}[unit]

    return {"rate": rate, "p50": pct(50), "p99": pct(99), "errors": int(errors.group(1)) if errors else 0,
            "socket_errors": socket_errors.group(1) if socket_errors else ""}


def python_round(url: str, body: bytes, seconds: float, connections: int) -> dict:
    """Threads with http.client (keep-alive where the server keeps the connection), for ``seconds``."""
    host, port = url.removeprefix("http://").split(":")
    deadline = time.perf_counter() + seconds
    latencies: list[list[float]] = [[] for _ in range(connections)]
    errors = [0] * connections
    headers = {"Content-Type": "application/json", "Content-Length": str(len(body))}

    def drive(k: int) -> None:
        conn = http.client.HTTPConnection(host, int(port), timeout=30)
        mine = latencies[k]
        while len(mine) < 1_000_000:  # bounded even on a very fast machine
            start = time.perf_counter()
            if start >= deadline:
                break
            try:
                conn.request("POST", "/v1/tests", body=body, headers=headers)
                response = conn.getresponse()
                response.read()
                if response.status != 200:
                    errors[k] += 1
                if response.will_close:
                    conn.close()
            except (OSError, http.client.HTTPException):
                errors[k] += 1
                conn.close()
                conn = http.client.HTTPConnection(host, int(port), timeout=30)
                continue
            mine.append(time.perf_counter() - start)
        conn.close()

    threads = [threading.Thread(target=drive, args=(k,)) for k in range(connections)]
    began = time.perf_counter()
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    elapsed = time.perf_counter() - began
    every = np.sort(np.concatenate([np.asarray(x) for x in latencies]))
    return {"rate": every.size / elapsed, "p50": float(np.quantile(every, 0.5)), "p99": float(np.quantile(every, 0.99)),
            "errors": sum(errors), "socket_errors": ""}


def run_http(args) -> None:
    workers = args.workers
    rounds, seconds = (1, 1.0) if args.quick else (5, 4.0)
    connections = 2 * workers
    tool = "wrk" if shutil.which("wrk") else "python"
    section(f"One request: POST /v1/tests against a bare Flask JSON endpoint, gunicorn with {workers} workers each "
            f"(docker/gunicorn.conf.py), {tool} with {connections} connections, {rounds} rounds of {seconds:g} s "
            "each, alternating")
    body = json.dumps(TEST_BODY).encode()
    with tempfile.TemporaryDirectory() as tmp:
        script = os.path.join(tmp, "post.lua")
        pathlib.Path(script).write_text(
            f'wrk.method = "POST"\nwrk.body = {json.dumps(body.decode())}\n'
            'wrk.headers["Content-Type"] = "application/json"\n')
        servers = {}
        apps = {"ours": None, "bare": BARE_APP, **(BREAKDOWN_APPS if args.breakdown else {})}
        try:
            for name, app in apps.items():
                servers[name] = start_server(app, workers)
            for _, _, url in servers.values():  # warm up: imports, first-request caches
                python_round(url, body, 0.5, 2)
            results: dict[str, list[dict]] = {name: [] for name in apps}
            for _ in range(rounds):
                for name in apps:
                    url = servers[name][2]
                    results[name].append(wrk_round(url, script, seconds, connections) if tool == "wrk"
                                         else python_round(url, body, seconds, connections))
        finally:
            for helpers, proc, _ in servers.values():
                helpers.stop_server(proc)
    ours, bare = results["ours"], results["bare"]
    per_round = [a["rate"] / b["rate"] for a, b in zip(ours, bare, strict=True)]
    note = "rounds: " + ", ".join(f"{r:.2f}" for r in per_round)
    failures = sum(r["errors"] for r in ours + bare)
    if failures or any(r["socket_errors"] for r in ours + bare):
        note += f"; {failures} non-2xx; socket errors: {[r['socket_errors'] for r in ours + bare]}"
    rate_o = statistics.median(r["rate"] for r in ours)
    rate_b = statistics.median(r["rate"] for r in bare)
    row("throughput, requests/s (median of rounds)", f"{rate_o:,.0f}", f"{rate_b:,.0f}",
        statistics.median(per_round), 0.85, note)
    for key, label in (("p50", "latency p50"), ("p99", "latency p99")):
        lat_o = statistics.median(r[key] for r in ours)
        lat_b = statistics.median(r[key] for r in bare)
        row(f"{label} (median of rounds)", us(lat_o), us(lat_b), lat_b / lat_o)
    for name in BREAKDOWN_APPS if args.breakdown else ():
        part = results[name]
        ratios = [a["rate"] / b["rate"] for a, b in zip(part, bare, strict=True)]
        row(f"breakdown: ours, {name}", f"{statistics.median(r['rate'] for r in part):,.0f}", f"{rate_b:,.0f}",
            statistics.median(ratios), note="rounds: " + ", ".join(f"{r:.2f}" for r in ratios)
            + (f"; {sum(r['errors'] for r in part)} non-2xx" if any(r["errors"] for r in part) else "")
            + (f"; socket errors: {[r['socket_errors'] for r in part]}" if any(r["socket_errors"] for r in part)
               else ""))
    if args.breakdown:
        print("breakdown: the service with one part of its cost taken away (benchmarks/breakdown_apps.py); "
              "diagnostics, not the service")
    print(f"load generator: {tool}; the client runs on the same {os.cpu_count()} CPUs, which narrows any gap")


# ------------------------------------------------------------------------------------------------
# Batch


def run_batch(args) -> None:
    sizes = [s for s in bench_batch.SIZES if s <= (1_000 if args.quick else bench_batch.SIZES[-1])]
    section("Batch: POST /v1/batch end to end (JSON both ways, one gunicorn worker) against a loop of statsmodels "
            "proportions_ztest in this process, per comparison")
    helpers, proc, url = start_server(None, 1, {"PROPORTIO_TIMEOUT": "600", "PROPORTIO_LOG_LEVEL": "WARNING"})
    try:
        import requests

        session = requests.Session()
        loop_size = 1_000 if args.quick else 10_000
        _, ref_counts = bench_batch.comparisons(loop_size, seed=99)
        sm_per = bench_batch.time_statsmodels(ref_counts)
        sm_ci_per = bench_batch.time_statsmodels(ref_counts[: 50 if args.quick else 200], with_interval=True)
        previous = None
        for size in sizes:
            items, counts = bench_batch.comparisons(size)
            repeats = 5 if size <= 1_000 else (2 if size <= 10_000 else 1)
            total, _ = bench_batch.time_batch(session, url, items, repeats)
            scaled = size > loop_size
            loop = sm_per * size if scaled else bench_batch.time_statsmodels(counts) * size
            growth = "" if previous is None else f"; per comparison x{(total / size) / previous:.2f} vs 10x fewer"
            previous = total / size
            row(f"batch of {size:,} items: per comparison", us(total / size), us(loop / size), loop / total,
                None, f"whole request {us(total)}{' (loop scaled from ' + f'{loop_size:,})' if scaled else ''}"
                f"{growth}; full /v1/tests answers")
        size = sizes[-1]
        row(f"batch of {size:,} items vs ztest + score interval loop", us(total / size), us(sm_ci_per),
            sm_ci_per * size / total,
            note="reference: proportions_ztest + confint_proportions_2indep(score) per comparison, comparable work")
        print("columnar form: counts sent as lists, answers as columns (the form meant for large batches)")
        for size in sizes:
            _, counts = bench_batch.comparisons(size)
            repeats = 5 if size <= 1_000 else (3 if size <= 10_000 else 2)
            total = bench_batch.time_columns(session, url, counts, bench_batch.ZTEST_FIELDS, repeats)
            scaled = size > loop_size
            loop = sm_per * size if scaled else bench_batch.time_statsmodels(counts) * size
            row(f"columns of {size:,}, statistic + p_value: per comparison", us(total / size), us(loop / size),
                loop / total, bench_batch.TARGET if size == bench_batch.SIZES[-1] else None,
                f"whole request {us(total)}; like for like with proportions_ztest (z and p)")
        total = bench_batch.time_columns(session, url, counts, None, 1)
        row(f"columns of {size:,}, every field vs ztest + score CI loop", us(total / size), us(sm_ci_per),
            sm_ci_per * size / total, note=f"whole request {us(total)}; with interval, reasons, summaries")
        for pid, rss in bench_batch.worker_peak_rss(proc.pid):
            print(f"worker {pid} peak resident memory (VmHWM): {rss / 2**20:.0f} MiB (bar: under 1,024 MiB)")
    finally:
        helpers.stop_server(proc)


# ------------------------------------------------------------------------------------------------
# Miettinen-Nurminen intervals


def random_tables(size: int, seed: int) -> tuple[np.ndarray, ...]:
    """Invented conversion counts: 2,000 to 200,000 trials per group, rates of 1 % to 20 %."""
    rng = np.random.default_rng(seed)
    n1 = rng.integers(2_000, 200_000, size)
    n2 = rng.integers(2_000, 200_000, size)
    base = rng.uniform(0.01, 0.2, size)
    x2 = rng.binomial(n2, base)
    x1 = rng.binomial(n1, base * rng.choice([1.0, 1.03, 1.08], size))
    return tuple(a.astype(np.float64) for a in (x1, n1, x2, n2))


def statsmodels_intervals(tables, compare: str) -> tuple[float, np.ndarray, int]:
    """Seconds per interval of statsmodels' score interval, its limits (NaN where it raised), failures."""
    from statsmodels.stats.proportion import confint_proportions_2indep

    x1, n1, x2, n2 = (a.tolist() for a in tables)
    out = np.full((len(x1), 2), np.nan)
    failed = 0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        start = time.perf_counter()
        for i, (a, b, c, d) in enumerate(zip(x1, n1, x2, n2, strict=True)):
            try:
                out[i] = confint_proportions_2indep(a, b, c, d, method="score", compare=compare, correction=True)
            except (ValueError, RuntimeError, ZeroDivisionError):
                failed += 1  # statsmodels' bracket misses on some tables; the time spent still counts
        elapsed = time.perf_counter() - start
    return elapsed / len(x1), out, failed


def best_of(func, repeat: int) -> float:
    best = math.inf
    for _ in range(repeat):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best


def run_mn(args) -> None:
    from proportio.stats import score
    from proportio.stats._common import z_two_sided

    size = 2_000 if args.quick else 10_000
    sample = 50 if args.quick else 300
    section(f"Miettinen-Nurminen score intervals (95%): vectorised over {size:,} random tables against "
            f"statsmodels confint_proportions_2indep(method='score') per interval (timed on {sample}, scaled)")
    tables = random_tables(size, seed=11)
    z = np.full(size, z_two_sided(0.95))
    for effect, compare in (("difference", "diff"), ("ratio", "ratio")):
        ours = best_of(lambda effect=effect: score.score_interval(*tables, z, z, effect, True), 1 if args.quick else 3)
        lower, upper = score.score_interval(*tables, z, z, effect, True)
        sm_per, ref, failed = statsmodels_intervals(tuple(a[:sample] for a in tables), compare)
        ok = ~np.isnan(ref[:, 0])
        got = np.stack([lower[:sample], upper[:sample]], axis=1)[ok]
        worst = float(np.max(np.abs(got - ref[ok]))) if ok.any() else math.nan
        note = f"largest |ours - statsmodels| {worst:.1e} over {int(ok.sum())} intervals"
        if effect == "difference":
            # tests/reference/test_score.py: statsmodels 0.15's cubic for the restricted MLE of the difference
            # has a wrong coefficient, so its limits are slightly off wherever the control has failures.
            note += " (statsmodels' difference MLE is off: tests/reference/test_score.py)"
        if failed:
            note += f"; statsmodels raised on {failed}"
        # DESIGN.md's bar names confint_proportions_2indep(method="score"), whose default compares differences.
        row(f"{effect}: per interval, {size:,} at once", us(ours / size), us(sm_per), sm_per * size / ours,
            100.0 if effect == "difference" else None, note)
        if effect == "difference":
            one = tuple(a[:1] for a in tables)
            single = best_of(lambda one=one: score.score_interval(*one, z[:1], z[:1], "difference", True),
                             20 if args.quick else 200)
            row("difference: one interval alone (a request's size)", us(single), us(sm_per), sm_per / single,
                note="the same limits to the last bit as in the vectorised call")


# ------------------------------------------------------------------------------------------------
# Exact tests


def run_exact(args) -> None:
    from scipy import stats

    from proportio.stats import exact

    cases = [c for c in bench_exact.CASES if c[0] <= (300 if args.quick else 1_000)]
    section("Boschloo's exact test, two-sided, against scipy.stats.boschloo_exact (default grid; "
            "scipy run once per table, ours best of 3)")
    for n, tables, target, _ in cases:
        x_t, x_c = tables[0]
        ours, res = bench_exact.best_time(exact.boschloo_exact, (x_t, n, x_c, n), 3)
        ref_t, ref = bench_exact.best_time(stats.boschloo_exact, ([[x_t, x_c], [n - x_t, n - x_c]],), 1)
        row(f"{n:,} per group ({x_t}/{n} v {x_c}/{n})", us(ours), us(ref_t), ref_t / ours, target,
            f"p ours {res.pvalue:.10f}, scipy {ref.pvalue:.10f} (difference {res.pvalue - ref.pvalue:.1e})")


# ------------------------------------------------------------------------------------------------
# Start-up


def first_answer_seconds(app: str | None) -> float:
    """Seconds from starting gunicorn (one worker) to the first 200 answer to POST /v1/tests."""
    helpers = bench_batch._e2e_helpers()
    argv = helpers.container_command()
    if app is not None:
        argv = [*argv[:-1], app]
    port = helpers.free_port()
    env = {**os.environ, "PROPORTIO_BIND": f"127.0.0.1:{port}", "PROPORTIO_WORKERS": "1",
           "PROPORTIO_LOG_LEVEL": "WARNING"}
    body = json.dumps(TEST_BODY).encode()
    with tempfile.TemporaryFile() as log:
        start = time.perf_counter()
        proc = subprocess.Popen(argv, cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT)
        try:
            while time.perf_counter() - start < 60:
                if proc.poll() is not None:
                    raise RuntimeError("gunicorn exited during start-up")
                try:
                    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=10)
                    conn.request("POST", "/v1/tests", body=body, headers={"Content-Type": "application/json"})
                    if conn.getresponse().status == 200:
                        return time.perf_counter() - start
                except OSError:
                    time.sleep(0.005)
                finally:
                    conn.close()
            raise RuntimeError("no answer within 60 s")
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=30)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()


def wall(argv: list[str], repeat: int) -> float:
    """Best wall time of ``repeat`` runs of ``argv`` (output discarded; a failure raises)."""
    best = math.inf
    for _ in range(repeat):
        start = time.perf_counter()
        done = subprocess.run(argv, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        best = min(best, time.perf_counter() - start)
        if done.returncode not in (0, 1, 3):  # gate: 0 pass, 1 fail, 3 inconclusive are all answers
            raise RuntimeError(f"{argv} exited with {done.returncode}")
    return best


def run_startup(args) -> None:
    repeat = 1 if args.quick else 3
    section("Start-up: process start to first answered request (gunicorn, one worker), import times, and the "
            f"CI gate (best of {repeat})")
    ours = min(first_answer_seconds(None) for _ in range(repeat))
    bare = min(first_answer_seconds(BARE_APP) for _ in range(repeat))
    row("start to first answered POST /v1/tests", us(ours), us(bare), bare / ours, note="reference: bare Flask app")
    py = sys.executable
    nothing = wall([py, "-c", "pass"], repeat + 2)
    core = wall([py, "-c", "import proportio.stats.twogroup"], repeat + 2)
    web = wall([py, "-c", "import proportio.api"], repeat + 2)
    row("import proportio.stats (twogroup) vs proportio.api", us(core - nothing), us(web - nothing),
        (web - nothing) / (core - nothing), note=f"net of python -c pass ({us(nothing)})")
    gate = wall([py, "-m", "proportio.cli", *GATE_ARGS], repeat + 2)
    probe = subprocess.run(
        [py, "-c", "import sys; from proportio.cli import main; code = main(sys.argv[1:]); "
         "print(sorted({m.split('.')[0] for m in sys.modules} & {'flask', 'werkzeug', 'gunicorn', 'requests'}), "
         "file=sys.stderr)", *GATE_ARGS], cwd=ROOT, capture_output=True, text=True)
    web_modules = probe.stderr.strip().splitlines()[-1] if probe.stderr.strip() else "?"
    no_flask = "flask" not in web_modules
    row("proportio gate --local, wall time", us(gate), us(nothing), nothing / gate, "no flask",
        f"web modules loaded: {web_modules}; reference: python -c pass", met=no_flask)


# ------------------------------------------------------------------------------------------------


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="shorten everything (a smoke run)")
    parser.add_argument("--only", default=",".join(SECTIONS), help=f"comma-separated sections of {SECTIONS}")
    parser.add_argument("--breakdown", action="store_true",
                        help="http section: also serve the service with its statistics memoised and without its "
                             "request hooks, to show where the gap to the bare endpoint lies")
    parser.add_argument("--workers", type=int, default=os.cpu_count() or 1,
                        help="gunicorn workers of each server in the http section (default: one per CPU)")
    args = parser.parse_args(argv)
    chosen = [s.strip() for s in args.only.split(",") if s.strip()]
    unknown = sorted(set(chosen) - set(SECTIONS))
    if unknown:
        parser.error(f"unknown section(s) {unknown}; choose from {', '.join(SECTIONS)}")
    print(f"python benchmarks/run_all.py {' '.join(argv if argv is not None else sys.argv[1:])}".rstrip())
    print(f"machine: {machine()}")
    print("ratio: higher is better (reference time / ours, or our throughput / the reference's)")
    print(HEADER)
    runners = {"http": run_http, "batch": run_batch, "mn": run_mn, "exact": run_exact, "startup": run_startup}
    for name in SECTIONS:
        if name in chosen:
            runners[name](args)
    return 0


if __name__ == "__main__":
    sys.exit(main())
