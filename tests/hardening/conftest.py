"""Real gunicorn servers for the hardening tests, started with exactly the container's command and config."""

from __future__ import annotations

import pytest

from gunicorn_server import Server  # tests/ is on sys.path: pytest inserts it for tests/conftest.py


@pytest.fixture
def start_server():
    """Start gunicorn servers on demand; every one is stopped at the end of the test."""
    started: list[Server] = []

    def start(env: dict[str, str] | None = None, workers: int = 2) -> Server:
        server = Server(env, workers)
        started.append(server)
        return server

    yield start
    for server in started:
        server.stop()
        server.log.close()


@pytest.fixture(scope="module")
def server():
    """One server for a module's tests: metrics behind a token, and a 4 KiB body limit."""
    srv = Server({"PROPORTIO_METRICS_TOKEN": "scrape", "PROPORTIO_MAX_BODY_BYTES": "4096"}, workers=2)
    yield srv
    srv.stop()
    srv.log.close()
