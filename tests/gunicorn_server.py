"""Start the service under a real gunicorn with exactly the container's command and configuration.

Shared by tests/e2e, tests/hardening and the benchmarks (which load this file by path).
"""

from __future__ import annotations

import json
import os
import pathlib
import signal
import socket
import subprocess
import sys
import tempfile
import time

import requests

ROOT = pathlib.Path(__file__).resolve().parents[1]


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


class Server:
    """A gunicorn master on a free loopback port; ``log`` holds its stdout and stderr."""

    def __init__(self, env: dict[str, str] | None = None, workers: int = 2) -> None:
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.env = {**os.environ, "PROPORTIO_BIND": f"127.0.0.1:{self.port}", "PROPORTIO_WORKERS": str(workers),
                    **(env or {})}
        self.env.pop("PROMETHEUS_MULTIPROC_DIR", None)
        # A file, not a pipe: a pipe nobody reads blocks the server once it is full.
        self.log = tempfile.TemporaryFile(mode="w+")
        self.proc = subprocess.Popen(container_command(), cwd=ROOT, env=self.env, stdout=self.log,
                                     stderr=subprocess.STDOUT, text=True)
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError("gunicorn exited: " + self.output())
            try:
                if requests.get(self.url + "/readyz", timeout=5).status_code == 200 and len(self.worker_pids()) == \
                        workers:
                    return
            except requests.RequestException:
                pass
            time.sleep(0.2)
        self.stop()
        raise RuntimeError("gunicorn did not become ready in 60 s: " + self.output())

    def worker_pids(self) -> list[int]:
        path = pathlib.Path(f"/proc/{self.proc.pid}/task/{self.proc.pid}/children")
        try:
            return sorted(int(p) for p in path.read_text().split())
        except OSError:
            return []

    @staticmethod
    def rss_kib(pid: int) -> int:
        for line in pathlib.Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith("VmRSS:"):
                return int(line.split()[1])
        raise RuntimeError(f"no VmRSS for {pid}")

    def output(self) -> str:
        self.log.flush()
        self.log.seek(0)
        return self.log.read()

    def log_records(self) -> list[dict]:
        return [json.loads(line) for line in self.output().splitlines() if line.startswith("{")]

    def terminate(self) -> None:
        self.proc.send_signal(signal.SIGTERM)

    def stop(self) -> None:
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=40)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()


def start_server(extra_env: dict[str, str] | None = None, workers: int = 2):
    """Start a server and return ``(process, url)``; stop it with :func:`stop_server`."""
    server = Server(extra_env, workers)
    server.proc.server = server
    return server.proc, server.url


def stop_server(proc) -> None:
    """Stop a server started by :func:`start_server` and close its log."""
    proc.server.stop()
    proc.server.log.close()
