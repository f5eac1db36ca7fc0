"""Cheap guards on the shape of a JSON body."""

from __future__ import annotations

from typing import Any

import numpy as np

# Every byte except the ones that decide nesting: brackets, quotes (strings) and backslashes (escapes).
_NOT_STRUCTURAL = bytes(c for c in range(256) if c not in b'{}[]"\\')
_QUOTE = ord('"')
_BACKSLASH = ord("\\")
_IS_MARK = np.zeros(256, dtype=bool)
_IS_MARK[[ord(c) for c in '{}[]"']] = True
_STEP = np.zeros(256, dtype=np.int8)
_STEP[[ord("{"), ord("[")]] = 1
_STEP[[ord("}"), ord("]")]] = -1


def deep_field(payload: Any, raw: bytes, limit: int) -> str | None:
    """Return the top-level field under which ``payload`` (parsed from ``raw``) nests deeper than ``limit``.

    The whole body counts as level 1 (``{"a": [1]}`` is two levels deep); None when it is within the
    limit. Cost: a body with no more than ``limit`` opening brackets cannot be too deep, which settles
    every ordinary request with two ``bytes.count``; a longer one (a batch) is measured on its brackets
    with numpy, milliseconds for megabytes. Only a body found too deep is walked, to name the field.
    """
    if not isinstance(payload, dict | list) or raw.count(b"{") + raw.count(b"[") <= limit:
        return None
    if bracket_depth(raw) <= limit:
        return None
    return _walk(payload, limit)


def bracket_depth(raw: bytes) -> int:
    """Greatest nesting of brackets outside JSON strings in ``raw``."""
    marks = raw.translate(None, _NOT_STRUCTURAL)
    # Strings without brackets, quotes or backslashes inside (nearly all) leave a bare "" behind: drop them.
    # If no quote is left, every string was such a pair and only the brackets remain to be counted.
    brackets = marks.replace(b'""', b"")
    if b'"' not in brackets and b"\\" not in brackets:
        return int(np.cumsum(_STEP[np.frombuffer(brackets, dtype=np.uint8)], dtype=np.int32).max(initial=0))
    if b"\\" not in marks:
        return _depth(np.frombuffer(marks, dtype=np.uint8))
    # Escapes: a quote preceded by an odd run of backslashes is part of a string, not its end.
    a = np.frombuffer(raw, dtype=np.uint8)
    index = np.arange(a.size, dtype=np.int64)
    last_plain = np.maximum.accumulate(np.where(a == _BACKSLASH, -1, index))
    run = np.zeros(a.size, dtype=np.int64)
    run[1:] = index[:-1] - last_plain[:-1]
    keep = _IS_MARK[a] & ((run & 1) == 0)
    return _depth(a[keep])


def _depth(marks: np.ndarray) -> int:
    outside = (np.cumsum(marks == _QUOTE, dtype=np.int32) & 1) == 0
    return int(np.cumsum(_STEP[marks] * outside, dtype=np.int32).max(initial=0))


def _walk(payload: Any, limit: int, budget: int = 100_000) -> str:
    """Find the top-level field that holds the too-deep part (``body`` if not found within ``budget`` nodes)."""
    stack: list[tuple[Any, int, str]] = [(payload, 1, "body")]
    while stack and budget > 0:
        budget -= 1
        node, depth, top = stack.pop()
        if depth > limit:
            return top
        items = node.items() if isinstance(node, dict) else enumerate(node)
        for key, value in items:
            if isinstance(value, dict | list):
                stack.append((value, depth + 1, str(key) if depth == 1 else top))
    return "body"
