"""An error type shared by the core-facing layers: a ValueError that knows which request field it is about."""

from __future__ import annotations


def field_error(message: str, field: str) -> ValueError:
    """Return a ValueError that the HTTP layer (and the CLI) report under the dotted ``field`` path."""
    exc = ValueError(message)
    exc.field = field  # type: ignore[attr-defined]
    return exc
