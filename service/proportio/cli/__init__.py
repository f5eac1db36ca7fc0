"""Command line: ``proportio serve | test | interval``.

``test`` and ``interval`` compute in-process by default (no server needed); with ``--url`` (or the
``PROPORTIO_URL`` environment variable) they call a running service instead and print the same result.
Exit codes: 0 done, 2 bad arguments or counts (one line on stderr), 1 the service failed or was unreachable.
``gate`` is the exception: its exit code is the verdict (0 pass, 1 fail, 3 inconclusive, 2 bad input, 4 service
failure; see :mod:`proportio.cli.guardrail`).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from collections.abc import Sequence

from . import allocation, arms, batch, guardrail, planning, sequential, twogroup
from .common import EXIT_ERROR, EXIT_OK, EXIT_USAGE, UsageError, add_remote, run


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="proportio", description="Compare success rates between groups.")
    sub = parser.add_subparsers(dest="command", required=True)

    serve = sub.add_parser("serve", help="start the HTTP service under gunicorn")
    serve.add_argument("--host", default=os.environ.get("PROPORTIO_HOST", "127.0.0.1"))
    serve.add_argument("--port", type=int, default=int(os.environ.get("PROPORTIO_PORT", "8000")))
    serve.add_argument("--workers", type=int, default=None, help="worker processes (default: 2 x cores + 1)")

    for module in COMMANDS:
        module.add_parsers(sub, add_remote)
    return parser


def _serve(args: argparse.Namespace) -> int:
    env = dict(os.environ)
    env["PROPORTIO_HOST"] = args.host
    env["PROPORTIO_PORT"] = str(args.port)
    if args.workers:
        env["PROPORTIO_WORKERS"] = str(args.workers)
    argv = [sys.executable, "-m", "gunicorn", "-c", "python:proportio.gunicorn_conf", "proportio.api:create_app()"]
    os.execvpe(argv[0], argv, env)
    return EXIT_OK  # pragma: no cover - exec does not return


# Each command module offers add_parsers(sub, add_remote) and HANDLERS {command: handler(args, run)}.
COMMANDS = (twogroup, planning, sequential, guardrail, batch, arms, allocation)
HANDLERS = {name: fn for module in COMMANDS for name, fn in module.HANDLERS.items()}


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        if args.command == "serve":
            return _serve(args)
        handler = HANDLERS.get(args.command)
        if handler is None:  # pragma: no cover - argparse rejects unknown commands
            parser.error(f"unknown command {args.command}")
        if getattr(handler, "returns_exit_code", False):  # gate: the exit code is the verdict (see its module)
            return handler(args, run)
        result, printer = handler(args, run)
    except UsageError as exc:
        print(f"proportio: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except Exception as exc:  # the service failed or could not be reached
        print(f"proportio: {exc}", file=sys.stderr)
        return EXIT_ERROR
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        printer(result)
    return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
