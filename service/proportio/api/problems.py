"""RFC 9457 problem responses: one exception type, one set of handlers, one JSON body parser."""

from __future__ import annotations

import json
import logging
from typing import Any, NoReturn

import orjson
from flask import Flask, Response, g, request
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge

from .limits import deep_field

log = logging.getLogger("proportio")

PROBLEM_TYPE_BASE = "/docs#problem-"
PROBLEM_MEDIA_TYPE = "application/problem+json"
TITLES = {
    400: "Malformed request",
    401: "Authentication required",
    404: "Not found",
    405: "Method not allowed",
    413: "Request too large",
    415: "Unsupported media type",
    422: "Invalid request",
    500: "Internal error",
    503: "Service unavailable",
}
SLUGS = {
    400: "malformed-json",
    401: "unauthorized",
    404: "not-found",
    405: "method-not-allowed",
    413: "too-large",
    415: "unsupported-media-type",
    422: "invalid-request",
    500: "internal-error",
    503: "unavailable",
}


class Problem(Exception):
    """An error that becomes an RFC 9457 response; ``errors`` maps dotted field paths to messages."""

    def __init__(self, status: int, detail: str, errors: dict[str, list[str]] | None = None,
                 headers: dict[str, str] | None = None) -> None:
        super().__init__(detail)
        self.status = status
        self.detail = detail
        self.errors = errors or {}
        self.headers = headers or {}


def problem_response(status: int, detail: str, errors: dict[str, list[str]] | None = None,
                     headers: dict[str, str] | None = None) -> Response:
    """Build the ``application/problem+json`` response for ``status``."""
    body: dict[str, Any] = {
        "type": PROBLEM_TYPE_BASE + SLUGS.get(status, "error"),
        "title": TITLES.get(status, "Error"),
        "status": status,
        "detail": detail,
        "errors": errors or {},
    }
    request_id = getattr(g, "request_id", None)
    if request_id:
        body["request_id"] = request_id
    response = Response(orjson.dumps(body), status=status, mimetype=PROBLEM_MEDIA_TYPE)
    for key, value in (headers or {}).items():
        response.headers[key] = value
    return response


def _reject_constant(name: str) -> None:
    raise ValueError(f"{name} is not valid JSON")


def parse_json_body() -> Any:
    """Return the decoded JSON body, or raise the 415 / 400 / 413 problem that fits."""
    req = request._get_current_object()  # type: ignore[attr-defined]
    mimetype = req.mimetype or ""
    if mimetype != "application/json" and not mimetype.endswith("+json"):
        raise Problem(415, "send the body as JSON with Content-Type: application/json",
                      {"Content-Type": [f"expected application/json, got {mimetype or 'nothing'}"]})
    try:
        raw = req.get_data(cache=False)
    except RequestEntityTooLarge as exc:
        raise Problem(413, _too_large_detail(), _TOO_LARGE) from exc
    # The length test first: it settles every body under the limit without parsing the headers again.
    if len(raw) >= (req.max_content_length or len(raw) + 1) and req.content_length is None:
        # A streamed (chunked) body is cut at the limit rather than refused: look for a byte beyond it.
        if req.environ["wsgi.input"].read(1):
            raise Problem(413, _too_large_detail(), _TOO_LARGE)
    if not raw.strip():
        raise Problem(400, "the request body is empty; send a JSON object", {"body": ["empty body"]})
    try:
        payload = orjson.loads(raw)
    except orjson.JSONDecodeError as exc:
        if "depth limit" in str(exc):
            _too_deep("body")
        # orjson refuses integers beyond 64 bits; the standard parser reads them so that the schema can
        # answer with a 422 naming the field. NaN and Infinity stay invalid JSON.
        try:
            payload = json.loads(raw, parse_constant=_reject_constant)
        except RecursionError:
            _too_deep("body")
        except ValueError:
            raise Problem(400, f"the body is not valid JSON: {exc.args[0] if exc.args else 'parse error'}",
                          {"body": ["malformed JSON"]}) from exc
    field = deep_field(payload, raw, _max_depth())
    if field is not None:
        _too_deep(field)
    return payload


def _max_depth() -> int:
    from flask import current_app

    return current_app.config.get("PROPORTIO_MAX_JSON_DEPTH", 32)


def _too_deep(field: str) -> NoReturn:
    limit = _max_depth()
    raise Problem(422, f"the body nests deeper than {limit} levels; no request of this API needs that",
                  {field: [f"nested deeper than the {limit}-level limit"]})


_TOO_LARGE = {"body": ["larger than PROPORTIO_MAX_BODY_BYTES allows"]}


def _too_large_detail() -> str:
    from flask import current_app

    limit = current_app.config.get("MAX_CONTENT_LENGTH")
    return (f"the body is larger than the {limit:,}-byte limit; split the work into several requests"
            if limit else "the body is too large")


def register_error_handlers(app: Flask) -> None:
    """Answer every error, including Flask's own, as a problem response."""

    @app.errorhandler(Problem)
    def _problem(exc: Problem):
        return problem_response(exc.status, exc.detail, exc.errors, exc.headers)

    @app.errorhandler(HTTPException)
    def _http(exc: HTTPException):
        status = exc.code or 500
        if status == 413:
            return problem_response(413, _too_large_detail(), _TOO_LARGE)
        detail = {
            404: f"no resource at {request.path}; see /docs for the endpoints",
            405: f"{request.method} is not allowed on {request.path}",
        }.get(status, exc.description or TITLES.get(status, "error"))
        headers = {}
        if status == 405 and exc.valid_methods:  # type: ignore[attr-defined]
            headers["Allow"] = ", ".join(sorted(exc.valid_methods))  # type: ignore[attr-defined]
        return problem_response(status, detail, headers=headers)

    @app.errorhandler(Exception)
    def _unexpected(exc: Exception):
        log.exception("unhandled error", extra={"request_id": getattr(g, "request_id", None)})
        return problem_response(500, "an internal error occurred; quote the request_id when reporting it")
