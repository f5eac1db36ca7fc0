"""SIGTERM under load: every request either completes or is refused at connect; none is cut off."""

from __future__ import annotations

import http.client
import json
import signal
import threading
import time

import pytest

pytestmark = pytest.mark.e2e

# An exact test on a few hundred trials per group takes a noticeable fraction of a second, so that
# requests are certainly in flight when the signal arrives.
SLOW = {"control": {"successes": 60, "trials": 600}, "treatment": {"successes": 75, "trials": 600},
        "method": "boschloo-exact"}
FAST = {"effect": "proportion", "group": {"successes": 3, "trials": 250}}


def _sender(port: int, path: str, body: dict, outcomes: list, stop: threading.Event) -> None:
    payload = json.dumps(body)
    deadline = time.monotonic() + 90
    while not stop.is_set() and time.monotonic() < deadline:
        conn = http.client.HTTPConnection("127.0.0.1", port, timeout=60)
        try:
            conn.connect()
        except ConnectionRefusedError:
            outcomes.append(("refused", time.monotonic(), None))
            return  # the server is gone: nothing more to send
        started = time.monotonic()
        try:
            conn.request("POST", path, body=payload, headers={"Content-Type": "application/json"})
            response = conn.getresponse()
            data = response.read()
            json.loads(data)
            outcomes.append(("done", started, (response.status, time.monotonic())))
        except Exception as exc:  # connected, then lost: exactly what must not happen
            outcomes.append(("cut", started, repr(exc)))
        finally:
            conn.close()


def test_sigterm_lets_accepted_requests_finish_and_refuses_new_ones(start_server):
    server = start_server(workers=2)
    outcomes: list = []
    stop = threading.Event()
    threads = [threading.Thread(target=_sender, args=(server.port, path, body, outcomes, stop), daemon=True)
               for path, body in (("/v1/tests", SLOW), ("/v1/tests", SLOW), ("/v1/intervals", FAST))]
    for t in threads:
        t.start()
    deadline = time.monotonic() + 60
    while sum(o[0] == "done" for o in outcomes) < 10 and time.monotonic() < deadline:
        time.sleep(0.05)
    signalled = time.monotonic()
    server.terminate()
    server.proc.wait(timeout=60)
    for t in threads:
        t.join(timeout=60)
    stop.set()

    cut = [o for o in outcomes if o[0] == "cut"]
    assert not cut, cut
    done = [o for o in outcomes if o[0] == "done"]
    assert all(status == 200 for _, _, (status, _) in done), done
    # Requests that were being served when the signal arrived were answered, not dropped.
    assert any(started < signalled < finished for _, started, (_, finished) in done)
    # Every sender ended on a refused connection: the server stopped listening instead of hanging.
    assert sum(o[0] == "refused" for o in outcomes) == len(threads)
    assert server.proc.returncode == 0
    log = server.output()
    assert "Traceback" not in log and "Exception in worker" not in log, log[-3000:]


@pytest.mark.parametrize("sig", [signal.SIGHUP, signal.SIGTTOU], ids=["reload", "one-worker-fewer"])
def test_retiring_some_workers_leaves_the_server_serving(start_server, sig):
    # A reload (HUP) replaces every worker and TTOU retires one; neither is a shutdown, so the listening
    # socket the remaining and new workers share must keep accepting.
    server = start_server(workers=2)
    before = server.worker_pids()
    server.proc.send_signal(sig)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        now = server.worker_pids()
        if (sig == signal.SIGHUP and now and not set(now) & set(before)) or (sig == signal.SIGTTOU and len(now) == 1):
            break
        time.sleep(0.1)
    else:
        pytest.fail(f"workers did not change: {before} -> {server.worker_pids()}")
    for _ in range(20):
        conn = http.client.HTTPConnection("127.0.0.1", server.port, timeout=10)
        conn.request("POST", "/v1/intervals", body=json.dumps(FAST), headers={"Content-Type": "application/json"})
        assert conn.getresponse().status == 200
        conn.close()
