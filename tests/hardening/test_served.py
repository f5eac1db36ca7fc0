"""What a real gunicorn (the container's command and config) shows the outside: no banner, no internals,
JSON logs on stdout, the body limit on chunked uploads, metrics behind their own token, summed over workers."""

from __future__ import annotations

import json
import socket
import time

import pytest
import requests
from prometheus_client.parser import text_string_to_metric_families

pytestmark = pytest.mark.e2e

BODY = {"control": {"successes": 40, "trials": 1000}, "treatment": {"successes": 55, "trials": 1000}}


def raw_exchange(port: int, data: bytes) -> bytes:
    with socket.create_connection(("127.0.0.1", port), timeout=30) as s:
        s.sendall(data)
        chunks = []
        while chunk := s.recv(65536):
            chunks.append(chunk)
    return b"".join(chunks)


def test_no_server_banner_anywhere(server):
    for r in (requests.get(server.url + "/healthz", timeout=30),
              requests.post(server.url + "/v1/tests", json=BODY, timeout=30),
              requests.get(server.url + "/nothing", timeout=30),
              requests.post(server.url + "/v1/tests", data="{", headers={"Content-Type": "application/json"},
                            timeout=30)):
        assert r.headers["Server"] == "proportio"
        assert "gunicorn" not in json.dumps(dict(r.headers)).lower() and "gunicorn" not in r.text.lower()


@pytest.mark.parametrize("request_bytes", [
    b"NOT-HTTP\r\n\r\n",
    b"GET /" + b"a" * 5000 + b" HTTP/1.1\r\nHost: x\r\n\r\n",
    b"GET /healthz HTTP/1.1\r\nHost: x\r\nX-Big: " + b"b" * 9000 + b"\r\n\r\n",
])
def test_requests_gunicorn_refuses_itself_name_no_server_and_no_trace(server, request_bytes):
    answer = raw_exchange(server.port, request_bytes)
    head = answer.split(b"\r\n", 1)[0]
    assert head.startswith(b"HTTP/1.1 4"), answer[:200]
    assert b"gunicorn" not in answer.lower() and b"Traceback" not in answer


def test_chunked_body_over_the_limit_is_a_413_problem(server):
    def chunks():
        for _ in range(10):
            yield b'{"padding": "' + b"x" * 1000 + b'"}'

    r = requests.post(server.url + "/v1/tests", data=chunks(), headers={"Content-Type": "application/json"},
                      timeout=30)
    assert r.status_code == 413 and r.headers["Content-Type"] == "application/problem+json"
    assert "body" in r.json()["errors"] and "4,096" in r.json()["detail"]


def test_declared_length_over_the_limit_is_refused_before_reading(server):
    answer = raw_exchange(server.port, b"POST /v1/tests HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"
                                       b"Content-Length: 999999999\r\nConnection: close\r\n\r\n{")
    assert answer.startswith(b"HTTP/1.1 413"), answer[:200]


def test_metrics_need_their_token_and_sum_every_worker(server):
    assert requests.get(server.url + "/metrics", timeout=30).status_code == 401
    auth = {"Authorization": "Bearer scrape"}

    def served() -> float:
        text = requests.get(server.url + "/metrics", headers=auth, timeout=30).text
        return sum(s.value for fam in text_string_to_metric_families(text) for s in fam.samples
                   if s.name == "proportio_http_requests_total" and s.labels["endpoint"] == "/v1/tests"
                   and s.labels["status"] == "200")

    before = served()
    # Send from several threads at once so that both workers take some (one idle worker can otherwise
    # accept every connection on a loaded machine); keep going, bounded, until both have served.
    from concurrent.futures import ThreadPoolExecutor

    def send(_):
        return requests.post(server.url + "/v1/tests", json=BODY, timeout=30).status_code

    sent = 0
    pids: set = set()
    with ThreadPoolExecutor(max_workers=4) as pool:
        while sent < 400 and len(pids) < 2:
            assert set(pool.map(send, range(40))) == {200}
            sent += 40
            pids = {line["pid"] for line in server.log_records()
                    if line.get("path") == "/v1/tests" and line.get("status") == 200}
    assert len(pids) == 2, "both workers should have served some of the requests"
    assert served() == before + sent  # the scrape, answered by one worker, counts every worker's requests


def test_logs_are_json_lines_on_stdout(server):
    requests.post(server.url + "/v1/tests", json=BODY, headers={"X-Request-ID": "e2e-log-1"}, timeout=30)
    requests.post(server.url + "/v1/tests", json={"control": {}}, headers={"X-Request-ID": "e2e-log-2"}, timeout=30)
    deadline = time.monotonic() + 10
    while time.monotonic() < deadline and "e2e-log-2" not in server.output():
        time.sleep(0.1)
    lines = [line for line in server.output().splitlines() if line.strip()]
    records = [json.loads(line) for line in lines]  # every line is JSON, gunicorn's own included
    assert any(r["logger"] == "gunicorn.error" and "Booting worker" in r["message"] for r in records)
    [ok] = [r for r in records if r.get("request_id") == "e2e-log-1"]
    assert ok["path"] == "/v1/tests" and ok["status"] == 200 and ok["statistical_method"] == "z-pooled"
    assert ok["method"] == "POST" and ok["duration_ms"] > 0
    [bad] = [r for r in records if r.get("request_id") == "e2e-log-2"]
    assert bad["status"] == 422
