"""Pieces every command shares: group parsing, the local-or-remote runner, output helpers."""

from __future__ import annotations

import argparse
import os

EXIT_OK, EXIT_ERROR, EXIT_USAGE = 0, 1, 2


class UsageError(Exception):
    """Bad arguments or counts: exit code 2 with one line on stderr."""


def group_arg(text: str) -> dict:
    successes, sep, trials = text.partition("/")
    try:
        if not sep:
            raise ValueError
        return {"successes": int(successes), "trials": int(trials)}
    except ValueError:
        raise argparse.ArgumentTypeError(f'expected successes/trials such as 48/1000, got "{text}"') from None


def add_remote(p: argparse.ArgumentParser) -> None:
    p.add_argument("--url", default=os.environ.get("PROPORTIO_URL"),
                   help="call this service instead of computing locally (default: $PROPORTIO_URL)")
    p.add_argument("--token", default=os.environ.get("PROPORTIO_TOKEN"), help="bearer token for --url")
    p.add_argument("--json", action="store_true", help="print the JSON the endpoint returns")


def run(path: str, body: dict, args: argparse.Namespace) -> dict:
    """Compute locally through the same schemas and operations as the service, or call the service."""
    if args.url:
        from ..client import Client, ProportioError

        try:
            with Client(args.url, token=args.token) as client:
                return client.request("POST", path, body)
        except ProportioError as exc:
            if 400 <= exc.status < 500:
                raise UsageError(problem_line(exc.detail, exc.errors)) from exc
            raise
    from marshmallow import ValidationError

    from .. import operations, schemas
    from ..api_paths import LOCAL_OPERATIONS

    request_schema, response_schema, func = LOCAL_OPERATIONS[path]
    try:
        data = getattr(schemas, request_schema)().load(body)
        result = getattr(operations, func)(data)
    except ValidationError as exc:
        raise UsageError(problem_line("invalid request", schemas.flatten_errors(exc.messages))) from exc
    except ValueError as exc:
        raise UsageError(str(exc)) from exc
    return getattr(schemas, response_schema)().dump(result)


def problem_line(detail: str, errors: dict) -> str:
    parts = [f"{field}: {'; '.join(msgs)}" for field, msgs in errors.items()]
    return "; ".join(parts) if parts else detail


def num(v) -> str:
    """Format a possibly-null number for the readable output."""
    return "unbounded" if v is None else f"{v:.6g}"
