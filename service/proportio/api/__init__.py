"""The Flask application: create_app() wires blueprints, errors, auth, request ids and the OpenAPI document."""

from __future__ import annotations

from flask import Flask

from ..settings import Settings
from . import observability
from .openapi import build_spec, render_docs, spec_json
from .problems import register_error_handlers
from .resources import allocation, arms, batch, guardrail, intervals, meta, planning, sequential, tests

OPEN_PATHS = ("/healthz", "/readyz", "/openapi.json", "/docs")


def create_app(test_config: dict | None = None) -> Flask:
    """Create the application; ``test_config`` overrides the settings read from the environment."""
    settings = Settings.from_env()
    app = Flask(__name__)
    app.config.from_mapping(
        MAX_CONTENT_LENGTH=settings.max_body_bytes,
        PROPORTIO_API_TOKENS=settings.api_tokens,
        PROPORTIO_METRICS_TOKEN=settings.metrics_token,
        PROPORTIO_CORS_ORIGINS=settings.cors_origins,
        PROPORTIO_MAX_JSON_DEPTH=settings.max_json_depth,
        # Flipped to False when the worker receives SIGTERM (gunicorn_conf.post_worker_init).
        PROPORTIO_READY=True,
    )
    if test_config:
        app.config.from_mapping(test_config)
    app.json.sort_keys = False  # type: ignore[attr-defined]

    for module in (tests, intervals, planning, sequential, guardrail, batch, arms, allocation, meta):
        app.register_blueprint(module.bp)
    register_error_handlers(app)

    spec = build_spec()
    app.extensions["proportio"] = {"spec": spec, "spec_json": spec_json(spec), "docs_html": render_docs(spec)}

    # Request id, auth, headers, CORS, the access log line and the metrics (GET /metrics).
    observability.install(app)

    return app

