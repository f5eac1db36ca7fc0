"""The Flask application: create_app() wires blueprints, errors, auth, request ids and the OpenAPI document."""

from __future__ import annotations

import hmac
import logging
import time
import uuid

from flask import Flask, g, request

from ..settings import Settings
from .openapi import build_spec, render_docs, spec_json
from .problems import Problem, register_error_handlers
from .resources import intervals, meta, tests

log = logging.getLogger("proportio.access")
OPEN_PATHS = ("/healthz", "/readyz", "/openapi.json", "/docs")


def create_app(test_config: dict | None = None) -> Flask:
    """Create the application; ``test_config`` overrides the settings read from the environment."""
    settings = Settings.from_env()
    app = Flask(__name__)
    app.config.from_mapping(
        MAX_CONTENT_LENGTH=settings.max_body_bytes,
        PROPORTIO_API_TOKENS=settings.api_tokens,
        PROPORTIO_READY=True,
    )
    if test_config:
        app.config.from_mapping(test_config)
    app.json.sort_keys = False  # type: ignore[attr-defined]

    for module in (tests, intervals, meta):
        app.register_blueprint(module.bp)
    register_error_handlers(app)

    spec = build_spec()
    app.extensions["proportio"] = {"spec": spec, "spec_json": spec_json(spec), "docs_html": render_docs(spec)}

    tokens = tuple(t.encode() for t in app.config["PROPORTIO_API_TOKENS"])

    @app.before_request
    def _start():
        g.started = time.perf_counter()
        incoming = request.headers.get("X-Request-ID", "")
        g.request_id = incoming if 0 < len(incoming) <= 128 and incoming.isprintable() else uuid.uuid4().hex
        if tokens and request.path.startswith("/v1/"):
            _check_token(tokens)

    @app.after_request
    def _finish(response):
        response.headers["X-Request-ID"] = g.get("request_id", "")
        response.headers["X-Content-Type-Options"] = "nosniff"
        if request.path.startswith("/v1/"):
            response.headers["Cache-Control"] = "no-store"
        if request.path not in ("/healthz", "/readyz"):
            log.info("request", extra={
                "request_id": g.get("request_id"), "method": request.method, "path": request.path,
                "status": response.status_code,
                "duration_ms": round(1000 * (time.perf_counter() - g.get("started", time.perf_counter())), 3),
            })
        return response

    return app


def _check_token(tokens: tuple[bytes, ...]) -> None:
    header = request.headers.get("Authorization", "")
    scheme, _, value = header.partition(" ")
    supplied = value.strip().encode() if scheme.lower() == "bearer" else b""
    # Compare against every configured token so the time taken does not reveal which one matched.
    matched = False
    for token in tokens:
        matched |= hmac.compare_digest(supplied, token)
    if not matched:
        raise Problem(401, "send a valid bearer token in the Authorization header",
                      {"Authorization": ["missing or invalid bearer token"]},
                      headers={"WWW-Authenticate": 'Bearer realm="proportio"'})
