"""Command line: ``proportio serve | test | interval``.

``test`` and ``interval`` compute in-process by default (no server needed); with ``--url`` (or the
``PROPORTIO_URL`` environment variable) they call a running service instead and print the same result.
Exit codes: 0 done, 2 bad arguments or counts (one line on stderr), 1 the service failed or was unreachable.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from collections.abc import Sequence

EXIT_OK, EXIT_ERROR, EXIT_USAGE = 0, 1, 2


class UsageError(Exception):
    """Bad arguments or counts: exit code 2 with one line on stderr."""


def _group(text: str) -> dict:
    successes, sep, trials = text.partition("/")
    try:
        if not sep:
            raise ValueError
        return {"successes": int(successes), "trials": int(trials)}
    except ValueError:
        raise argparse.ArgumentTypeError(f'expected successes/trials such as 48/1000, got "{text}"') from None


def _add_remote(p: argparse.ArgumentParser) -> None:
    p.add_argument("--url", default=os.environ.get("PROPORTIO_URL"),
                   help="call this service instead of computing locally (default: $PROPORTIO_URL)")
    p.add_argument("--token", default=os.environ.get("PROPORTIO_TOKEN"), help="bearer token for --url")
    p.add_argument("--json", action="store_true", help="print the JSON the endpoint returns")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="proportio", description="Compare success rates between groups.")
    sub = parser.add_subparsers(dest="command", required=True)

    serve = sub.add_parser("serve", help="start the HTTP service under gunicorn")
    serve.add_argument("--host", default=os.environ.get("PROPORTIO_HOST", "127.0.0.1"))
    serve.add_argument("--port", type=int, default=int(os.environ.get("PROPORTIO_PORT", "8000")))
    serve.add_argument("--workers", type=int, default=None, help="worker processes (default: 2 x cores + 1)")

    test = sub.add_parser("test", help="test whether two success rates differ")
    test.add_argument("--control", type=_group, required=True, metavar="S/N")
    test.add_argument("--treatment", type=_group, required=True, metavar="S/N")
    test.add_argument("--method", default="auto")
    test.add_argument("--alternative", default="two-sided")
    test.add_argument("--null-value", type=float, default=None)
    test.add_argument("--effect", default="difference")
    test.add_argument("--alpha", type=float, default=0.05)
    test.add_argument("--continuity-correction", action="store_true")
    _add_remote(test)

    interval = sub.add_parser("interval", help="confidence interval for a proportion or a two-group effect")
    interval.add_argument("--effect", default="difference")
    interval.add_argument("--control", type=_group, metavar="S/N")
    interval.add_argument("--treatment", type=_group, metavar="S/N")
    interval.add_argument("--group", type=_group, metavar="S/N", help="the single group of --effect proportion")
    interval.add_argument("--method", default=None)
    interval.add_argument("--confidence", type=float, default=0.95)
    _add_remote(interval)
    return parser


def _run(path: str, body: dict, args: argparse.Namespace) -> dict:
    """Compute locally through the same schemas and operations as the service, or call the service."""
    if args.url:
        from .client import Client, ProportioError

        try:
            with Client(args.url, token=args.token) as client:
                return client.request("POST", path, body)
        except ProportioError as exc:
            if 400 <= exc.status < 500:
                raise UsageError(_problem_line(exc.detail, exc.errors)) from exc
            raise
    from marshmallow import ValidationError

    from . import operations, schemas
    from .api_paths import LOCAL_OPERATIONS

    request_schema, response_schema, func = LOCAL_OPERATIONS[path]
    try:
        data = getattr(schemas, request_schema)().load(body)
        result = getattr(operations, func)(data)
    except ValidationError as exc:
        raise UsageError(_problem_line("invalid request", schemas.flatten_errors(exc.messages))) from exc
    except ValueError as exc:
        raise UsageError(str(exc)) from exc
    return getattr(schemas, response_schema)().dump(result)


def _problem_line(detail: str, errors: dict) -> str:
    parts = [f"{field}: {'; '.join(msgs)}" for field, msgs in errors.items()]
    return "; ".join(parts) if parts else detail


def _print_test(result: dict) -> None:
    print(result["summary"])
    iv = result["interval"]
    reason = f"  ({result['method_reason']})" if result.get("method_reason") else ""
    print(f"  method      {result['method']}{reason}")
    stat = result["statistic"]
    print(f"  statistic   {stat:.6g}" if stat is not None else "  statistic   undefined")
    p = result["p_value"]
    print(f"  p-value     {p:.6g}" if p is not None else "  p-value     undefined")
    print(f"  interval    {iv['method']} {iv['confidence']:.3g}: [{_num(iv['lower'])}, {_num(iv['upper'])}]")
    for warning in result["warnings"]:
        print(f"  warning     {warning}")


def _print_interval(result: dict) -> None:
    print(f"{result['effect']} {_num(result['estimate'])}, {result['method']} {result['confidence']:.3g} interval "
          f"[{_num(result['lower'])}, {_num(result['upper'])}]")
    for warning in result["warnings"]:
        print(f"  warning  {warning}")


def _num(v) -> str:
    return "unbounded" if v is None else f"{v:.6g}"


def _serve(args: argparse.Namespace) -> int:
    env = dict(os.environ)
    env["PROPORTIO_HOST"] = args.host
    env["PROPORTIO_PORT"] = str(args.port)
    if args.workers:
        env["PROPORTIO_WORKERS"] = str(args.workers)
    argv = [sys.executable, "-m", "gunicorn", "-c", "python:proportio.gunicorn_conf", "proportio.api:create_app()"]
    os.execvpe(argv[0], argv, env)
    return EXIT_OK  # pragma: no cover - exec does not return


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        if args.command == "serve":
            return _serve(args)
        if args.command == "test":
            body = {"control": args.control, "treatment": args.treatment, "method": args.method,
                    "alternative": args.alternative, "null_value": args.null_value, "effect": args.effect,
                    "alpha": args.alpha, "continuity_correction": args.continuity_correction}
            result = _run("/v1/tests", body, args)
            printer = _print_test
        elif args.command == "interval":
            body = {"effect": args.effect, "method": args.method, "confidence": args.confidence}
            for name in ("control", "treatment", "group"):
                if getattr(args, name) is not None:
                    body[name] = getattr(args, name)
            result = _run("/v1/intervals", body, args)
            printer = _print_interval
        else:  # pragma: no cover - argparse rejects unknown commands
            parser.error(f"unknown command {args.command}")
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
