"""Declare an endpoint once: its request schema, response schema and docs feed both Flask and OpenAPI."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from functools import wraps
from time import perf_counter

import orjson
from flask import Blueprint, Response, g
from marshmallow import Schema, ValidationError

from ..errors import field_error  # noqa: F401  (re-exported for views)
from ..schemas import flatten_errors
from ..schemas.base import compile_dump, compile_load
from .problems import Problem, parse_json_body


@dataclass(frozen=True)
class Operation:
    path: str
    method: str
    summary: str
    description: str
    tag: str
    request: type[Schema] | None
    response: type[Schema] | None
    example: dict | None = None
    errors: tuple[int, ...] = field(default=(400, 413, 415, 422))


OPERATIONS: list[Operation] = []


def json_response(payload, status: int = 200) -> Response:
    """Serialise with orjson; NaN or infinities, should any slip through, become null."""
    # content_type rather than mimetype: the same header, without working out whether a charset belongs in it.
    return Response(orjson.dumps(payload), status=status, content_type="application/json")


def operation(bp: Blueprint, path: str, *, tag: str, request: type[Schema] | None = None,
              response: type[Schema] | None = None, method: str = "POST", example: dict | None = None,
              errors: tuple[int, ...] | None = None) -> Callable:
    """Register ``fn`` as the view of ``method path``.

    With a request schema the body is parsed and validated before ``fn(data)`` runs (422 with dotted
    field paths on failure); a ``ValueError`` raised by the statistics core becomes a 422 too. The
    return value is dumped through the response schema.
    """

    def decorate(fn: Callable) -> Callable:
        req = request() if request else None
        resp = response() if response else None
        # The same load and dump as the schemas' own, compiled once instead of interpreted per request.
        load = compile_load(req) if req is not None else None
        dump = compile_dump(resp) if resp is not None else None
        doc = (fn.__doc__ or "").strip()
        summary, _, description = doc.partition("\n")

        @wraps(fn)
        def view():
            if req is None:
                result = fn()
            else:
                payload = parse_json_body()
                if not isinstance(payload, dict):
                    raise Problem(422, "the body must be a JSON object", {"body": ["expected a JSON object"]})
                try:
                    data = load(payload)
                except ValidationError as exc:
                    raise Problem(422, "the request does not meet the contract; see errors",
                                  flatten_errors(exc.messages)) from exc
                started = perf_counter()
                try:
                    result = fn(data)
                except ValueError as exc:
                    raise Problem(422, str(exc), {getattr(exc, "field", "body"): [str(exc)]}) from exc
                _note_method(result, perf_counter() - started)
            if isinstance(result, Response):
                return result
            return json_response(dump(result) if dump is not None else result)

        bp.add_url_rule(path, endpoint=fn.__name__, view_func=view, methods=[method])
        default_errors = (400, 413, 415, 422) if req is not None else ()
        OPERATIONS.append(Operation(path, method.lower(), summary.strip(), description.strip(), tag, request,
                                    response, example, default_errors if errors is None else errors))
        return view

    return decorate


def _note_method(result, seconds: float) -> None:
    """Put the statistical method of ``result`` (attribute or key ``method``) in flask.g for log and metrics.

    A view whose result has no single method may set ``g.stat_method`` itself.
    """
    method = result.get("method") if isinstance(result, dict) else getattr(result, "method", None)
    if isinstance(method, str):
        state = g._get_current_object()  # type: ignore[attr-defined]
        if "stat_method" not in state:
            state.stat_method = method
            state.compute_seconds = seconds
