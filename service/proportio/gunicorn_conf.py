"""Gunicorn settings, read from PROPORTIO_* environment variables (docker/gunicorn.conf.py loads this)."""

from __future__ import annotations

import os

from proportio.settings import Settings

_settings = Settings.from_env()

bind = os.environ.get("PROPORTIO_BIND", f"{_settings.host}:{_settings.port}")
workers = _settings.workers
threads = 1
worker_class = "sync"
timeout = _settings.timeout
# SIGTERM: stop accepting, let in-flight requests finish for up to this many seconds.
graceful_timeout = int(os.environ.get("PROPORTIO_GRACEFUL_TIMEOUT", "20"))
keepalive = int(os.environ.get("PROPORTIO_KEEPALIVE", "5"))
max_requests = int(os.environ.get("PROPORTIO_MAX_REQUESTS", "0"))
max_requests_jitter = max_requests // 10
limit_request_line = 4094
limit_request_fields = 100
limit_request_field_size = 8190
accesslog = None
errorlog = "-"
loglevel = _settings.log_level.lower()
worker_tmp_dir = "/dev/shm" if os.path.isdir("/dev/shm") else None
proc_name = "proportio"
