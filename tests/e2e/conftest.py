"""A real gunicorn server on a free loopback port, started with the same config the container uses."""

from __future__ import annotations

import pytest

from gunicorn_server import start_server, stop_server  # tests/ is on sys.path (see tests/conftest.py)


@pytest.fixture(scope="session")
def server_url():
    proc, url = start_server()
    yield url
    stop_server(proc)
