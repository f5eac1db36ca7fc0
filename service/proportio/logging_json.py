"""One JSON object per log line on stdout: what log collectors parse without a custom pattern."""

from __future__ import annotations

import logging
import os
import sys
import time

import orjson

# Attributes every LogRecord has; anything else on a record came in through ``extra=`` and is emitted.
_STANDARD = (frozenset(vars(logging.LogRecord("", 0, "", 0, "", (), None)))
             | {"message", "asctime", "taskName"})


class JsonFormatter(logging.Formatter):
    """Format a record as one line of JSON: time, level, logger, message, then the ``extra`` fields."""

    _second = -1
    _stamp = ""

    def format(self, record: logging.LogRecord) -> str:
        second = int(record.created)
        if second != self._second:  # strftime once a second, not once a line
            self._stamp = time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(second))
            self._second = second
        out = {
            "time": f"{self._stamp}.{int(record.msecs):03d}Z",
            "level": record.levelname.lower(),
            "logger": record.name,
            "message": record.getMessage(),
            "pid": record.process,
        }
        fields = record.__dict__
        for key in fields.keys() - _STANDARD:
            value = fields[key]
            if value is not None:
                out[key] = value
        if record.exc_info:
            # Only the log gets the traceback: responses never carry it.
            out["exception"] = self.formatException(record.exc_info)
        return orjson.dumps(out, default=str).decode()


_handler: logging.Handler | None = None

# os.getpid() is a system call on every line otherwise; refreshed in every child a fork makes (gunicorn's
# workers), so it is always this process's id.
_pid = os.getpid()


def _refresh_pid() -> None:
    global _pid
    _pid = os.getpid()


os.register_at_fork(after_in_child=_refresh_pid)


def process_id() -> int:
    """This process's id, as ``os.getpid()`` gives it, without a system call."""
    return _pid


def log_fields(logger: logging.Logger, message: str, fields: dict) -> None:
    """Log ``message`` at INFO with ``fields``, as ``logger.info(message, extra=fields)`` would.

    When the logger writes only to the handler ``configure`` installed, the line is built and written
    directly: a LogRecord costs more than the rest of the request bookkeeping together.
    """
    if not logger.isEnabledFor(logging.INFO):
        return
    handler = _handler
    parent = logger.parent
    if (handler is None or logger.handlers or parent is None or len(parent.handlers) != 1
            or parent.handlers[0] is not handler):
        logger.info(message, extra=fields)
        return
    now = time.time()
    second = int(now)
    formatter = handler.formatter
    if second != formatter._second:
        formatter._stamp = time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(second))
        formatter._second = second
    out = {"time": f"{formatter._stamp}.{int((now - second) * 1000):03d}Z", "level": "info",
           "logger": logger.name, "message": message, "pid": _pid}
    for key, value in fields.items():
        if value is not None:
            out[key] = value
    line = orjson.dumps(out).decode() + "\n"
    with handler.lock:
        handler.stream.write(line)
        handler.stream.flush()


def configure(level: str = "INFO") -> None:
    """Send the ``proportio`` loggers to stdout as JSON, unless the host process configured them.

    The gunicorn configuration calls this in the master before workers fork; an application that embeds
    ``create_app()`` keeps its own logging. Idempotent: a second call only updates the level.
    """
    logger = logging.getLogger("proportio")
    logger.setLevel(level)
    if any(getattr(h, "_proportio", False) for h in logger.handlers):
        return
    if logger.handlers:  # configured by whoever embeds the app: leave their choice alone
        return
    global _handler
    handler = logging.StreamHandler(sys.stdout)
    handler.setFormatter(JsonFormatter())
    handler._proportio = True  # type: ignore[attr-defined]
    logger.addHandler(handler)
    logger.propagate = False
    _handler = handler
