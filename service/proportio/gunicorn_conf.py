"""Gunicorn settings and hooks, read from PROPORTIO_* environment variables.

``docker/gunicorn.conf.py`` (the container) and ``proportio serve`` load this module. Besides the settings
it makes gunicorn:
- log JSON lines on stdout, its own lines like the application's (``JsonLogger``);
- answer without a ``Server: gunicorn`` banner;
- keep Prometheus counters in a multiprocess directory so that ``/metrics`` sums every worker
  (``on_starting`` creates it, ``child_exit`` marks dead workers, ``on_exit`` removes it);
- shut down gracefully: on SIGTERM the master stops new TCP handshakes (``on_starting`` wraps its stop);
  each worker reports not ready (``post_worker_init``), finishes the request in hand, serves the
  connections already queued and only then lets go of the listening socket, so that a client is either
  served or refused at connect, never cut off (``worker_exit``);
- log the request a worker was serving when the timeout killed it (``worker_abort``).
"""

from __future__ import annotations

import ctypes
import logging
import os
import shutil
import signal
import socket
import struct
import sys
import tempfile
import time

import gunicorn.http.wsgi
from gunicorn.glogging import Logger

from proportio.logging_json import JsonFormatter
from proportio.logging_json import configure as configure_logging
from proportio.settings import Settings

# What `from proportio.gunicorn_conf import *` (docker/gunicorn.conf.py) hands to gunicorn.
__all__ = [
    "bind", "workers", "threads", "worker_class", "timeout", "graceful_timeout", "keepalive", "max_requests",
    "max_requests_jitter", "limit_request_line", "limit_request_fields", "limit_request_field_size",
    "accesslog", "errorlog", "loglevel", "worker_tmp_dir", "proc_name", "control_socket_disable", "logger_class",
    "on_starting", "post_worker_init", "worker_exit", "worker_abort", "child_exit", "on_exit",
]

_settings = Settings.from_env()

bind = os.environ.get("PROPORTIO_BIND", f"{_settings.host}:{_settings.port}")
workers = _settings.workers
threads = 1
worker_class = "sync"
# A worker silent for this long (a request that never ends) is killed and replaced.
timeout = _settings.timeout
# SIGTERM: stop accepting, let in-flight requests finish for up to this many seconds.
graceful_timeout = _settings.graceful_timeout
keepalive = _settings.keepalive
max_requests = _settings.max_requests
max_requests_jitter = max_requests // 10
limit_request_line = 4094
limit_request_fields = 100
limit_request_field_size = 8190
accesslog = None  # the application logs one JSON line per request itself
errorlog = "-"
loglevel = _settings.log_level.lower()
worker_tmp_dir = "/dev/shm" if os.path.isdir("/dev/shm") else None
proc_name = "proportio"
# No runtime control socket (gunicorn 25.1+): nothing to manage from outside, nothing written to $HOME.
control_socket_disable = True

# Gunicorn writes "Server: <this>" on every response; the version of the server is nobody's business.
gunicorn.http.wsgi.SERVER = "proportio"
gunicorn.http.wsgi.SERVER_SOFTWARE = "proportio"

_OWNED_METRICS_DIR = "_PROPORTIO_OWNED_METRICS_DIR"


class JsonLogger(Logger):
    """Gunicorn's own log lines (start, worker boot, errors) as JSON on stdout."""

    def _set_handler(self, log, output, fmt, stream=None):
        super()._set_handler(log, output, JsonFormatter(), sys.stdout if output == "-" else stream)


logger_class = JsonLogger


def on_starting(server) -> None:
    """Set up logging and the metrics directory in the master, before any worker forks."""
    configure_logging(_settings.log_level)
    path = os.environ.get("PROMETHEUS_MULTIPROC_DIR")
    if path:
        # An operator-chosen directory: counters from a previous run would be added to this one's.
        os.makedirs(path, exist_ok=True)
        for name in os.listdir(path):
            if name.endswith(".db"):
                os.remove(os.path.join(path, name))
    else:
        path = tempfile.mkdtemp(prefix="proportio-metrics-")
        os.environ["PROMETHEUS_MULTIPROC_DIR"] = path
        os.environ[_OWNED_METRICS_DIR] = path
    _refuse_handshakes_when_stopping(server)


def _refuse_handshakes_when_stopping(server) -> None:
    """On a graceful stop of the whole server, stop new TCP handshakes before the workers are signalled.

    Only when this master is the socket's sole owner: not while a new master started by USR2 shares it,
    not with systemd socket activation or SO_REUSEPORT. A single worker retired by a reload, TTOU or
    max_requests never touches the socket, which its siblings keep serving.
    """
    original = server.stop

    def stop(graceful=True):
        sole_owner = (server.reexec_pid == server.master_pid == 0 and not server.systemd
                      and not server.cfg.reuse_port)
        if graceful and sole_owner:
            for listener in server.LISTENERS:
                _refuse_handshakes(listener)
        original(graceful)

    server.stop = stop


def post_worker_init(worker) -> None:
    """Make SIGTERM mark the worker not ready before gunicorn's own handler stops its loop."""
    original = worker.handle_exit

    def on_sigterm(sig, frame):
        begin_shutdown(worker)
        original(sig, frame)

    signal.signal(signal.SIGTERM, on_sigterm)
    signal.siginterrupt(signal.SIGTERM, False)


def begin_shutdown(worker) -> None:
    """Answer /readyz with 503 from now on; ``worker_exit`` serves the queued connections at the end."""
    config = getattr(getattr(worker, "wsgi", None), "config", None)
    if config is not None:
        config["PROPORTIO_READY"] = False
    worker.proportio_stopping = True


def worker_exit(server, worker) -> None:
    """After a SIGTERM, serve the connections already queued, then let go of the listening socket.

    The master closed its copy of the listening socket before signalling, but the kernel keeps the socket
    (and its queue of connections not yet accepted) while any worker holds a copy, and resets whatever is
    queued when the last copy closes: a client that connected while every worker was busy would be cut
    off. So the master stops new handshakes first (``_refuse_handshakes_when_stopping``), and each worker,
    once its request in hand is done, serves the queue until it is empty and only then closes its copy. A
    client is either served or, once every worker has closed, refused at connect. Bounded by half the
    graceful timeout. A worker retired alone (reload, TTOU) serves its share of the queue the same way.
    """
    if not getattr(worker, "proportio_stopping", False) or worker.__class__.__name__ != "SyncWorker":
        return
    deadline = time.monotonic() + graceful_timeout / 2
    for listener in worker.sockets:
        try:
            while time.monotonic() < deadline:
                client, addr = listener.accept()  # non-blocking: raises once nothing is queued
                client.setblocking(True)
                worker.handle(listener, client, addr)
        except OSError:
            pass
        _release(listener)


# Linux SO_ATTACH_FILTER with the one-instruction classic BPF program "return 0": drop every packet that
# reaches the listening socket. Connections already accepted by the kernel have sockets of their own and
# are unaffected; a new SYN goes unanswered, and the client's retry meets a closed port (refused).
_SO_ATTACH_FILTER = 26
_DROP_ALL = struct.pack("HBBI", 0x06, 0, 0, 0)  # BPF_RET | BPF_K, k = 0


def _refuse_handshakes(listener) -> None:
    if not sys.platform.startswith("linux"):
        return
    try:
        program = ctypes.create_string_buffer(_DROP_ALL)
        fprog = struct.pack("HP", 1, ctypes.addressof(program))  # struct sock_fprog {len; filter *}
        listener.sock.setsockopt(socket.SOL_SOCKET, _SO_ATTACH_FILTER, fprog)
    except (OSError, AttributeError):  # without it the drain still serves what is queued at its end
        pass


def _release(listener) -> None:
    """Close this process's copy of ``listener`` now, leaving an idle placeholder on its descriptor."""
    try:
        placeholder = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        placeholder.bind(("127.0.0.1", 0))
        placeholder.listen(1)
        os.dup2(placeholder.fileno(), listener.fileno())
        placeholder.close()
    except OSError:  # the process exits right after; never let shutdown fail on this
        pass


def worker_abort(worker) -> None:
    """Log which request a worker was serving when gunicorn's timeout stopped it."""
    from proportio.api.observability import CURRENT

    logging.getLogger("proportio.access").error(
        "worker timed out", extra={"request_id": CURRENT.get("request_id"), "path": CURRENT.get("path"),
                                   "timeout_s": timeout})


def child_exit(server, worker) -> None:
    """Tell the metrics of a dead worker apart from those of live ones."""
    if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        from prometheus_client import multiprocess

        multiprocess.mark_process_dead(worker.pid)


def on_exit(server) -> None:
    """Remove the metrics directory this master created."""
    path = os.environ.get(_OWNED_METRICS_DIR)
    if path and path == os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        shutil.rmtree(path, ignore_errors=True)
