"""The Python client: a method per endpoint, documented, and a transport that retries only what is safe."""

from __future__ import annotations

import inspect

import pytest
import requests

from proportio import client as client_module
from proportio.api import create_app
from proportio.api.registry import OPERATIONS
from proportio.client import Client, ProportioError

# The smallest call of each method; the fake session records where it goes.
CALLS = {
    "test": lambda api: api.test((1, 2), (1, 2)),
    "interval": lambda api: api.interval("proportion", group=(1, 2)),
    "sample_size": lambda api: api.sample_size(0.1, expected_rate=0.12),
    "batch": lambda api: api.batch([((1, 2), (1, 2))]),
    "batch_columns": lambda api: api.batch_columns([1], [2], [1], [2], fields=["p_value"]),
    "arms": lambda api: api.arms([("a", 1, 2), ("b", 1, 2)]),
    "allocation_check": lambda api: api.allocation_check([10, 11]),
    "sequential_plan": lambda api: api.sequential_plan(3),
    "sequential_analyze": lambda api: api.sequential_analyze([((1, 2), (1, 2))], max_trials=10),
    "always_valid": lambda api: api.always_valid((1, 2), (1, 2)),
    "guardrail": lambda api: api.guardrail((1, 2), (1, 2), 0.1),
    "methods": lambda api: api.methods(),
    "health": lambda api: api.health(),
}


class FakeResponse:
    def __init__(self, status: int = 200, body=None, text: str | None = None) -> None:
        self.status_code = status
        self._body = {} if body is None else body
        self.text = text if text is not None else "{}"
        self.reason = "reason"
        self.headers: dict[str, str] = {}

    def json(self):
        if self.text != "{}" and not self._body:
            raise requests.JSONDecodeError("Expecting value", self.text, 0)
        return self._body


class FakeSession:
    """Stands in for requests.Session: answers from a script, records every call."""

    def __init__(self, script=None) -> None:
        self.headers: dict[str, str] = {}
        self.calls: list[tuple[str, str, dict | None, object]] = []
        self.script = list(script or [])

    def request(self, method, url, json=None, timeout=None):
        self.calls.append((method, url, json, timeout))
        step = self.script.pop(0) if self.script else FakeResponse()
        if isinstance(step, BaseException):
            raise step
        return step

    def close(self) -> None:
        pass


def test_every_endpoint_has_a_client_method_that_calls_it():
    create_app()  # registers every operation
    served = {(op.method.upper(), op.path) for op in OPERATIONS if op.path.startswith("/v1/") or op.path == "/healthz"}
    called = set()
    for call in CALLS.values():
        session = FakeSession()
        call(Client("http://h", session=session, retries=0))
        (method, url, _, _), = session.calls
        called.add((method, url.removeprefix("http://h")))
    assert served <= called, f"endpoints without a client method: {sorted(served - called)}"


def test_the_module_docstring_tables_every_public_method():
    public = {name for name, _ in inspect.getmembers(Client, inspect.isfunction)
              if not name.startswith("_") and name not in ("request", "close")}
    assert public == set(CALLS)
    doc = client_module.__doc__
    for name in public:
        assert f"\n{name}(" in doc, name
        assert getattr(Client, name).__doc__, name


def test_token_timeout_and_connection_reuse():
    session = FakeSession()
    api = Client("http://h/", token="s3cret", timeout=(2.0, 30.0), session=session)
    api.health()
    api.health()
    assert session.headers["Authorization"] == "Bearer s3cret"
    assert [c[1] for c in session.calls] == ["http://h/healthz", "http://h/healthz"]
    assert all(c[3] == (2.0, 30.0) for c in session.calls)
    assert Client("http://h", session=FakeSession()).session.headers.get("Authorization") is None


def test_connection_failures_and_gateway_errors_are_retried():
    script = [requests.ConnectionError("refused"), requests.ConnectTimeout("slow connect"), FakeResponse(503),
              FakeResponse(200, {"status": "ok"})]
    session = FakeSession(script)
    assert Client("http://h", session=session, retries=3, backoff=0).health() == {"status": "ok"}
    assert len(session.calls) == 4


def test_read_timeouts_and_other_errors_are_not_retried():
    session = FakeSession([requests.ReadTimeout("still computing")])
    with pytest.raises(ProportioError) as exc:
        Client("http://h", session=session, retries=3, backoff=0).health()
    assert exc.value.status == 0 and "not retried" in exc.value.detail and len(session.calls) == 1
    for status in (500, 422, 404):
        session = FakeSession([FakeResponse(status, {"title": "t", "detail": "d", "errors": {"f": ["m"]}})])
        with pytest.raises(ProportioError) as exc:
            Client("http://h", session=session, retries=3, backoff=0).test((1, 2), (1, 2))
        assert exc.value.status == status and exc.value.errors == {"f": ["m"]} and len(session.calls) == 1


def test_retries_give_up_with_a_typed_error():
    session = FakeSession([requests.ConnectionError("refused")] * 3)
    with pytest.raises(ProportioError) as exc:
        Client("http://h", session=session, retries=2, backoff=0).health()
    assert exc.value.status == 0 and len(session.calls) == 3


def test_a_body_that_is_not_json_is_a_typed_error():
    session = FakeSession([FakeResponse(200, text="<html>proxy page</html>")])
    with pytest.raises(ProportioError) as exc:
        Client("http://h", session=session).health()
    assert exc.value.status == 0 and "not JSON" in exc.value.detail
