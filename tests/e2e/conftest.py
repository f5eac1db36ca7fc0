"""A real gunicorn server on a free loopback port, started with the same config the container uses."""

from __future__ import annotations

import json
import os
import pathlib
import socket
import subprocess
import sys
import tempfile
import time

import pytest
import requests

ROOT = pathlib.Path(__file__).resolve().parents[2]


def container_command() -> list[str]:
    """The CMD of docker/Dockerfile (exec form), with this interpreter standing in for ``python``."""
    lines = [line for line in (ROOT / "docker" / "Dockerfile").read_text().splitlines() if line.startswith("CMD ")]
    argv = json.loads(lines[-1][len("CMD "):])
    if argv[0] == "python":
        argv[0] = sys.executable
    return argv


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start_server(extra_env: dict[str, str] | None = None, workers: int = 2):
    port = free_port()
    env = {**os.environ, "PROPORTIO_BIND": f"127.0.0.1:{port}", "PROPORTIO_WORKERS": str(workers),
           **(extra_env or {})}
    # Exactly the container's command (docker/Dockerfile CMD, read from the file) with its config file.
    # The server's own log goes to a file: a pipe nobody reads would block it once full.
    log = tempfile.TemporaryFile(mode="w+")
    proc = subprocess.Popen(container_command(), cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT, text=True)
    proc.log = log
    url = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            log.seek(0)
            raise RuntimeError("gunicorn exited: " + log.read())
        try:
            if requests.get(url + "/readyz", timeout=5).status_code == 200:
                return proc, url
        except requests.RequestException:
            time.sleep(0.2)
    proc.kill()
    proc.wait()
    log.close()
    raise RuntimeError("gunicorn did not become ready in 60 s")


def stop_server(proc) -> None:
    proc.terminate()
    try:
        proc.wait(timeout=30)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()
    proc.log.close()


@pytest.fixture(scope="session")
def server_url():
    proc, url = start_server()
    yield url
    stop_server(proc)
