"""Per-request bookkeeping kept cheap: the direct log line, its process id after a fork, metric handles."""

from __future__ import annotations

import json
import logging
import os

from proportio import logging_json
from proportio.api import observability

BODY = {"control": {"successes": 412, "trials": 9630}, "treatment": {"successes": 471, "trials": 9598}}


def test_direct_log_line_is_the_line_the_formatter_writes(json_log):
    """log_fields' shortcut writes what logger.info(..., extra=fields) through JsonFormatter writes."""
    fields = {"request_id": "r-1", "method": "POST", "path": "/v1/tests", "status": 200, "duration_ms": 0.5,
              "statistical_method": None}
    access = logging.getLogger("proportio.access")
    logging_json.log_fields(access, "request", fields)
    access.info("request", extra=fields)
    direct, formatted = (json.loads(line) for line in json_log.getvalue().splitlines())
    assert direct.pop("time")[:10] == formatted.pop("time")[:10]
    assert list(direct.items()) == list(formatted.items())
    assert direct["pid"] == os.getpid() and "statistical_method" not in direct


def test_log_lines_carry_the_id_of_the_process_that_writes_them_after_a_fork():
    """Gunicorn forks its workers from the master that imported this module: each line names its worker."""
    read, write = os.pipe()
    child = os.fork()
    if child == 0:  # pragma: no cover - runs in the child, which reports through the pipe
        try:
            stream = os.fdopen(write, "w")
            handler = logging.StreamHandler(stream)
            handler.setFormatter(logging_json.JsonFormatter())
            parent = logging.getLogger("proportio")
            parent.handlers[:] = [handler]
            parent.setLevel(logging.INFO)
            logging_json._handler = handler
            access = logging.getLogger("proportio.access")
            access.handlers[:] = []
            logging_json.log_fields(access, "request", {"status": 200})
            stream.flush()
        finally:
            os._exit(0)
    os.close(write)
    with os.fdopen(read) as pipe:
        line = pipe.read()
    os.waitpid(child, 0)
    assert json.loads(line)["pid"] == child != os.getpid()


def test_process_id_is_the_id_of_the_calling_process_after_a_fork():
    """prometheus_client's multiprocess values take it for os.getpid: a child must get its own id, or two
    workers would write one metrics file."""
    read, write = os.pipe()
    child = os.fork()
    if child == 0:  # pragma: no cover - runs in the child, which reports through the pipe
        try:
            os.write(write, f"{logging_json.process_id()} {os.getpid()}".encode())
        finally:
            os._exit(0)
    os.close(write)
    with os.fdopen(read) as pipe:
        reported, actual = map(int, pipe.read().split())
    os.waitpid(child, 0)
    assert reported == actual == child
    assert logging_json.process_id() == os.getpid() != child


def test_metric_handles_are_reused_per_kind_of_request_and_counted_like_labels(client):
    before = dict(observability._instrument_sets)
    client.post("/v1/tests", json=BODY)
    client.post("/v1/tests", json=BODY)
    client.post("/v1/tests", json={"control": BODY["control"]})
    added = set(observability._instrument_sets) - set(before)
    assert added <= {("/v1/tests", "POST", 200, "z-pooled"), ("/v1/tests", "POST", 422, None)}
    assert ("/v1/tests", "POST", 200, "z-pooled") in observability._instrument_sets
    count, observe, count_method, observe_exact = observability._instrument_sets[
        ("/v1/tests", "POST", 200, "z-pooled")]
    assert count_method is not None and observe_exact is None  # the pooled z-test is not an exact method
    _, _, count_method, _ = observability._instrument_sets[("/v1/tests", "POST", 422, None)]
    assert count_method is None


def test_request_id_is_read_from_the_header_as_sent(client):
    r = client.post("/v1/tests", json=BODY, headers={"X-Request-ID": "trace-7"})
    assert r.headers["X-Request-ID"] == "trace-7"
    r = client.post("/v1/tests", json=BODY, headers={"X-Request-ID": "x" * 129})
    assert len(r.headers["X-Request-ID"]) == 32 and r.headers["X-Request-ID"] != "x" * 129
    r = client.post("/v1/tests", json=BODY)
    assert len(r.headers["X-Request-ID"]) == 32
    assert r.headers["X-Content-Type-Options"] == "nosniff" and r.headers["Cache-Control"] == "no-store"
    assert r.headers["Content-Type"] == "application/json"
