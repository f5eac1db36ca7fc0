"""Service endpoints: health, readiness, the method catalogue, the OpenAPI document and the docs page."""

from __future__ import annotations

from flask import Blueprint, Response, current_app

from ... import __version__
from ...catalogue import catalogue
from ...schemas import HealthSchema
from ..registry import json_response, operation

bp = Blueprint("meta", __name__)


@operation(bp, "/healthz", tag="service", response=HealthSchema, method="GET")
def healthz():
    """Report that the process is alive."""
    return {"status": "ok", "version": __version__}


@operation(bp, "/readyz", tag="service", response=HealthSchema, method="GET", errors=(503,))
def readyz():
    """Report whether this worker takes traffic (503 while starting or shutting down)."""
    if not current_app.config.get("PROPORTIO_READY", True):
        return json_response({"status": "unavailable", "version": __version__}, status=503)
    return {"status": "ready", "version": __version__}


@operation(bp, "/v1/methods", tag="service", method="GET")
def list_methods():
    """List every method with what it does, when to use it, its references and the cautions."""
    return catalogue()


@operation(bp, "/openapi.json", tag="service", method="GET")
def openapi_document():
    """Return this OpenAPI 3.1 document."""
    return Response(current_app.extensions["proportio"]["spec_json"], mimetype="application/json")


@operation(bp, "/docs", tag="service", method="GET")
def docs():
    """Return the readable API reference (HTML, no external assets)."""
    return Response(current_app.extensions["proportio"]["docs_html"], mimetype="text/html")
