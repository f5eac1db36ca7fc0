"""Settings from PROPORTIO_* environment variables, each with a safe default."""

from __future__ import annotations

import os
from dataclasses import dataclass


def _int(name: str, default: int, minimum: int = 1) -> int:
    raw = os.environ.get(name)
    if raw is None or raw.strip() == "":
        return default
    try:
        value = int(raw)
    except ValueError as exc:
        raise ValueError(f"{name} must be a whole number, got {raw!r}") from exc
    if value < minimum:
        raise ValueError(f"{name} must be at least {minimum}, got {value}")
    return value


def _list(name: str) -> tuple[str, ...]:
    return tuple(part.strip() for part in os.environ.get(name, "").split(",") if part.strip())


@dataclass(frozen=True)
class Settings:
    max_body_bytes: int
    api_tokens: tuple[str, ...]
    log_level: str
    host: str
    port: int
    workers: int
    timeout: int

    @classmethod
    def from_env(cls) -> Settings:
        return cls(
            max_body_bytes=_int("PROPORTIO_MAX_BODY_BYTES", 32 * 1024 * 1024),
            api_tokens=_list("PROPORTIO_API_TOKENS"),
            log_level=os.environ.get("PROPORTIO_LOG_LEVEL", "INFO").upper(),
            host=os.environ.get("PROPORTIO_HOST", "127.0.0.1"),
            port=_int("PROPORTIO_PORT", 8000),
            workers=_int("PROPORTIO_WORKERS", (os.cpu_count() or 1) * 2 + 1),
            timeout=_int("PROPORTIO_TIMEOUT", 30),
        )
