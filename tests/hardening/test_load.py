"""Loopback load against a real gunicorn (2 workers): thousands of mixed requests, zero errors, flat memory.

Bounded: PROPORTIO_LOAD_REQUESTS requests (default 2,000) from 4 threads, and never longer than 90 s
(or 50 ms a request for larger counts), whichever comes first.
Soak: PROPORTIO_SOAK_SECONDS=600 runs the same mix for that long instead (see DEVELOPERS.md).
"""

from __future__ import annotations

import os
import random
import threading
import time
from collections import Counter

import pytest
import requests
from prometheus_client.parser import text_string_to_metric_families

pytestmark = pytest.mark.e2e

THREADS = 4
REQUESTS = int(os.environ.get("PROPORTIO_LOAD_REQUESTS", "2000"))
SOAK_SECONDS = float(os.environ.get("PROPORTIO_SOAK_SECONDS", "0"))
MAX_SECONDS = max(90.0, SOAK_SECONDS + 30, REQUESTS * 0.05)  # a bound, not an expectation
# Growth allowed between the end of the warm-up and the end of the run, per worker.
MAX_RSS_GROWTH = 0.10

GROUP_A = {"successes": 120, "trials": 1000}
GROUP_B = {"successes": 150, "trials": 1000}
JSON = {"Content-Type": "application/json"}

# (weight, method, path, body or raw bytes, headers, expected status). Cheap calls carry the weight;
# every documented example (all endpoints, whoever wrote them) is added below with a small weight.
MIX: list[tuple[float, str, str, object, dict, int]] = [
    (10, "POST", "/v1/intervals", {"effect": "proportion", "group": {"successes": 3, "trials": 250}}, {}, 200),
    (6, "POST", "/v1/intervals", {"control": GROUP_A, "treatment": GROUP_B, "method": "newcombe"}, {}, 200),
    (8, "POST", "/v1/tests", {"control": GROUP_A, "treatment": GROUP_B, "method": "z-unpooled"}, {}, 200),
    (1, "POST", "/v1/tests", {"control": GROUP_A, "treatment": GROUP_B}, {}, 200),
    (3, "GET", "/v1/methods", None, {}, 200),
    (3, "GET", "/healthz", None, {}, 200),
    (3, "POST", "/v1/tests", {"control": {"successes": 11, "trials": 10}, "treatment": GROUP_B}, {}, 422),
    (2, "POST", "/v1/tests", b'{"control": {"successes": 1', JSON, 400),
    (2, "POST", "/v1/intervals", b"successes=1", {"Content-Type": "text/plain"}, 415),
    (1, "GET", "/v1/nothing-here", None, {}, 404),
]


def _examples(url: str) -> list[tuple[float, str, str, object, dict, int]]:
    spec = requests.get(url + "/openapi.json", timeout=30).json()
    out = []
    for path, operations in spec["paths"].items():
        for method, op in operations.items():
            example = op.get("requestBody", {}).get("content", {}).get("application/json", {}).get("example")
            if method == "post" and example is not None:
                out.append((0.25, "POST", path, example, {}, 200))
    return out


def _send(session: requests.Session, url: str, item) -> tuple[int, str]:
    _, method, path, body, headers, _ = item
    if isinstance(body, bytes):
        r = session.request(method, url + path, data=body, headers=headers, timeout=60)
    else:
        r = session.request(method, url + path, json=body, headers=headers, timeout=60)
    return r.status_code, r.text[:300]


def requests_total(url: str) -> float:
    """The sum of proportio_http_requests_total over every label set, as /metrics reports it."""
    text = requests.get(url + "/metrics", timeout=30).text
    return sum(sample.value for family in text_string_to_metric_families(text) for sample in family.samples
               if sample.name == "proportio_http_requests_total")


def _run(url: str, mix, count: int, seconds: float, threads: int, seed: int) -> tuple[Counter, list]:
    errors: list = []
    sent: Counter = Counter()
    done = [0]
    lock = threading.Lock()
    stop_at = time.monotonic() + seconds
    weights = [item[0] for item in mix]

    def worker(k: int) -> None:
        rng = random.Random(seed + k)
        session = requests.Session()
        while time.monotonic() < stop_at:
            with lock:
                if count and done[0] >= count:
                    return
                done[0] += 1
            item = rng.choices(mix, weights)[0]
            with lock:
                sent[item[2]] += 1
            try:
                status, text = _send(session, url, item)
            except requests.RequestException as exc:
                errors.append((item[1], item[2], repr(exc)))
                continue
            if status != item[5]:
                errors.append((item[1], item[2], status, text))

    pool = [threading.Thread(target=worker, args=(k,), daemon=True) for k in range(threads)]
    for t in pool:
        t.start()
    for t in pool:
        t.join(timeout=seconds + 60)
    return sent, errors


def test_mixed_load_has_no_errors_and_flat_worker_memory(start_server):
    server = start_server(workers=2)
    mix = MIX + _examples(server.url)
    pids = server.worker_pids()
    assert len(pids) == 2

    # Warm-up: every kind of request a few times on both workers, so that lazy imports and caches are
    # in place before the memory baseline is taken.
    sent, errors = _run(server.url, mix, count=300, seconds=60, threads=THREADS, seed=1)
    assert not errors, errors[:5]
    before = {pid: server.rss_kib(pid) for pid in pids}
    counted_before = requests_total(server.url)

    if SOAK_SECONDS:
        sent, errors = _run(server.url, mix, count=0, seconds=SOAK_SECONDS, threads=THREADS, seed=2)
    else:
        sent, errors = _run(server.url, mix, count=REQUESTS, seconds=MAX_SECONDS, threads=THREADS, seed=2)
    assert not errors, errors[:5]
    # The time bound only stops a run on a machine far slower than expected; it is not a speed test.
    assert sum(sent.values()) >= min(REQUESTS, 1000)

    # Neither worker died or was replaced, and neither grew.
    assert server.worker_pids() == pids
    after = {pid: server.rss_kib(pid) for pid in pids}
    for pid in pids:
        assert after[pid] <= before[pid] * (1 + MAX_RSS_GROWTH), (pid, before[pid], after[pid])
    # Every request of the run was counted, summed over both workers; health checks are not traffic.
    assert requests_total(server.url) - counted_before == sum(sent.values()) - sent["/healthz"]
    log = server.output()
    assert "Traceback" not in log, log[-3000:]
