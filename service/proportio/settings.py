"""Settings from PROPORTIO_* environment variables, each with a safe default.

Every limit that bounds the cost of a request or the life of a worker is here, so that the README's
Configuration table, the Flask app and the gunicorn configuration read the same values.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

LOG_LEVELS = ("DEBUG", "INFO", "WARNING", "ERROR", "CRITICAL")


def _int(name: str, default: int, minimum: int = 1, maximum: int | None = None) -> int:
    raw = os.environ.get(name)
    if raw is None or raw.strip() == "":
        return default
    try:
        value = int(raw)
    except ValueError as exc:
        raise ValueError(f"{name} must be a whole number, got {raw!r}") from exc
    if value < minimum:
        raise ValueError(f"{name} must be at least {minimum}, got {value}")
    if maximum is not None and value > maximum:
        raise ValueError(f"{name} must be at most {maximum}, got {value}")
    return value


def _list(name: str) -> tuple[str, ...]:
    return tuple(part.strip() for part in os.environ.get(name, "").split(",") if part.strip())


def _choice(name: str, default: str, choices: tuple[str, ...]) -> str:
    value = (os.environ.get(name) or default).strip().upper()
    if value not in choices:
        raise ValueError(f"{name} must be one of {', '.join(choices)}, got {value!r}")
    return value


@dataclass(frozen=True)
class Settings:
    max_body_bytes: int
    max_json_depth: int
    api_tokens: tuple[str, ...]
    metrics_token: str
    cors_origins: tuple[str, ...]
    log_level: str
    host: str
    port: int
    workers: int
    timeout: int
    graceful_timeout: int
    keepalive: int
    max_requests: int

    @classmethod
    def from_env(cls) -> Settings:
        return cls(
            max_body_bytes=_int("PROPORTIO_MAX_BODY_BYTES", 32 * 1024 * 1024),
            # orjson's own ceiling is 1024 levels; no request of this API needs more than a handful.
            max_json_depth=_int("PROPORTIO_MAX_JSON_DEPTH", 32, minimum=4, maximum=1000),
            api_tokens=_list("PROPORTIO_API_TOKENS"),
            metrics_token=os.environ.get("PROPORTIO_METRICS_TOKEN", "").strip(),
            cors_origins=_list("PROPORTIO_CORS_ORIGINS"),
            log_level=_choice("PROPORTIO_LOG_LEVEL", "INFO", LOG_LEVELS),
            host=os.environ.get("PROPORTIO_HOST", "127.0.0.1"),
            port=_int("PROPORTIO_PORT", 8000, maximum=65535),
            workers=_int("PROPORTIO_WORKERS", (os.cpu_count() or 1) * 2 + 1),
            timeout=_int("PROPORTIO_TIMEOUT", 30),
            graceful_timeout=_int("PROPORTIO_GRACEFUL_TIMEOUT", 20),
            keepalive=_int("PROPORTIO_KEEPALIVE", 5, minimum=0),
            max_requests=_int("PROPORTIO_MAX_REQUESTS", 0, minimum=0),
        )
