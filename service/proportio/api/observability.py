"""What happens around every request: request id, auth, headers, CORS, one log line and the metrics.

``install(app)`` wires it into an app. ``GET /metrics`` serves the Prometheus text format; under gunicorn
the counters live in ``PROMETHEUS_MULTIPROC_DIR`` (set up by ``proportio.gunicorn_conf``) so that a scrape
sees every worker. Health, readiness and metrics requests are not counted as traffic and not logged.

The statistical method of a request is what the registry found in the result of its operation (a
``method`` attribute or key), or what the view put in ``flask.g.stat_method`` itself.
"""

from __future__ import annotations

import hmac
import logging
import os
import time
from random import getrandbits
from typing import Any

from flask import Blueprint, Flask, Response, current_app, g, request
from prometheus_client import CONTENT_TYPE_LATEST, CollectorRegistry, Counter, Histogram, generate_latest
from prometheus_client import values as prometheus_values

from ..logging_json import log_fields, process_id
from .problems import Problem
from .registry import operation

log = logging.getLogger("proportio.access")

# Probes and scrapes arrive every few seconds whatever the traffic: counting them would drown it.
UNCOUNTED = frozenset({"/healthz", "/readyz", "/metrics"})
# Documents that may be cached; every computed answer is marked no-store.
CACHEABLE = frozenset({"/openapi.json", "/docs"})
EXACT_METHODS = frozenset({"fisher-exact", "boschloo-exact", "barnard-exact", "conditional-exact"})
HTTP_METHODS = frozenset({"GET", "HEAD", "POST", "PUT", "PATCH", "DELETE", "OPTIONS"})
CORS_ALLOW_HEADERS = "Authorization, Content-Type, X-Request-ID"
MAX_REQUEST_ID = 128

if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
    # Under gunicorn each update of a counter asks the kernel for the process id, to notice a fork (four
    # system calls per request). The id kept by logging_json (refreshed in every child a fork makes) is the
    # same number; prometheus_client takes the function for it as an argument.
    prometheus_values.ValueClass = prometheus_values.MultiProcessValue(process_identifier=process_id)

REGISTRY = CollectorRegistry(auto_describe=True)
REQUESTS = Counter("proportio_http_requests", "HTTP requests answered, by endpoint, HTTP method and status.",
                   ["endpoint", "method", "status"], registry=REGISTRY)
LATENCY = Histogram("proportio_http_request_duration_seconds", "Time from routing to response, by endpoint.",
                    ["endpoint"], registry=REGISTRY,
                    buckets=(0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10,
                             30))
METHODS_USED = Counter("proportio_statistical_methods", "Requests answered with each statistical method.",
                       ["endpoint", "method"], registry=REGISTRY)
EXACT_DURATION = Histogram("proportio_exact_test_duration_seconds",
                           "Computation time of requests answered by an exact method.", ["method"],
                           registry=REGISTRY,
                           buckets=(0.001, 0.005, 0.01, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30))

# Label children are looked up once per distinct label set, not on every request.
_children: dict[tuple, Any] = {}
_instrument_sets: dict[tuple, tuple] = {}

# What the worker is doing now, for the log line gunicorn's timeout hook writes before the worker dies.
CURRENT: dict[str, Any] = {}

bp = Blueprint("observability", __name__)


@operation(bp, "/metrics", tag="service", method="GET", errors=(401,))
def metrics():
    """Report request counts, latencies and the statistical methods used (Prometheus text format).

    Needs the bearer token of `PROPORTIO_METRICS_TOKEN` when that variable is set; open otherwise.
    Health, readiness and metrics requests are not counted.
    """
    token = current_app.config.get("PROPORTIO_METRICS_TOKEN")
    if token:
        check_bearer((token.encode(),))
    registry: Any = REGISTRY
    if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        from prometheus_client import multiprocess

        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry)
    return Response(generate_latest(registry), headers={"Content-Type": CONTENT_TYPE_LATEST})


def check_bearer(tokens: tuple[bytes, ...]) -> None:
    """Raise a 401 problem unless the Authorization header carries one of ``tokens``."""
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


def _child(metric, *labels: str):
    key = (id(metric), *labels)
    child = _children.get(key)
    if child is None:
        child = _children[key] = metric.labels(*labels)
    return child


def _instruments(endpoint: str, method: str, status: int, stat_method: str | None) -> tuple:
    """The metric updates of one kind of request: (count, observe latency, count method, observe exact)."""
    key = (endpoint, method, status, stat_method)
    found = _instrument_sets.get(key)
    if found is None:
        count_method = observe_exact = None
        if stat_method is not None:
            count_method = _child(METHODS_USED, endpoint, stat_method).inc
            if stat_method in EXACT_METHODS:
                observe_exact = _child(EXACT_DURATION, stat_method).observe
        found = _instrument_sets[key] = (_child(REQUESTS, endpoint, method, str(status)).inc,
                                         _child(LATENCY, endpoint).observe, count_method, observe_exact)
    return found


def install(app: Flask) -> None:
    """Add the request hooks and ``GET /metrics`` to ``app`` (reads its PROPORTIO_* config now)."""
    app.register_blueprint(bp)
    tokens = tuple(t.encode() for t in app.config.get("PROPORTIO_API_TOKENS", ()))
    origins = frozenset(app.config.get("PROPORTIO_CORS_ORIGINS", ()))
    perf_counter = time.perf_counter

    @app.before_request
    def _start():
        started = perf_counter()
        req = request._get_current_object()  # type: ignore[attr-defined]
        state = g._get_current_object()  # type: ignore[attr-defined]
        state.started = started
        # The header as EnvironHeaders.get("X-Request-ID") reads it, without building the headers object.
        incoming = req.environ.get("HTTP_X_REQUEST_ID")
        # An id only has to be unique in the logs, not secret: the seeded PRNG (gunicorn reseeds each
        # worker) is enough and far cheaper than the kernel's entropy.
        request_id = (incoming if incoming and len(incoming) <= MAX_REQUEST_ID and incoming.isprintable()
                      else f"{getrandbits(128):032x}")
        state.request_id = CURRENT["request_id"] = request_id
        CURRENT["path"] = req.path
        # A CORS preflight carries no credentials by design; it only learns what the real request may send.
        if tokens and req.path.startswith("/v1/") and req.method != "OPTIONS":
            check_bearer(tokens)

    @app.after_request
    def _finish(response: Response) -> Response:
        CURRENT.clear()
        req = request._get_current_object()  # type: ignore[attr-defined]
        state = g._get_current_object()  # type: ignore[attr-defined]
        headers = response.headers
        request_id = getattr(state, "request_id", "")
        headers["X-Request-ID"] = request_id
        headers["X-Content-Type-Options"] = "nosniff"
        path = req.path
        if path not in CACHEABLE:
            headers["Cache-Control"] = "no-store"
        if origins:
            _cors(response, origins)
        if path in UNCOUNTED:
            return response
        elapsed = perf_counter() - getattr(state, "started", perf_counter())
        rule = req.url_rule
        endpoint = rule.rule if rule is not None else "unmatched"
        method = req.method
        if method not in HTTP_METHODS:
            method = "other"
        status = response.status_code
        stat_method = getattr(state, "stat_method", None)
        count, observe, count_method, observe_exact = _instruments(endpoint, method, status, stat_method)
        count()
        observe(elapsed)
        if count_method is not None:
            count_method()
            if observe_exact is not None:
                observe_exact(getattr(state, "compute_seconds", elapsed))
        log_fields(log, "request", {
            "request_id": request_id, "method": req.method, "path": path, "status": status,
            "duration_ms": round(1000 * elapsed, 3), "statistical_method": stat_method,
        })
        return response


def _cors(response: Response, origins: frozenset[str]) -> None:
    origin = request.headers.get("Origin")
    if not origin:
        return
    if "*" in origins:
        response.headers["Access-Control-Allow-Origin"] = "*"
    elif origin in origins:
        response.headers["Access-Control-Allow-Origin"] = origin
        response.headers.add("Vary", "Origin")
    else:
        return
    if request.method == "OPTIONS" and "Access-Control-Request-Method" in request.headers:
        response.headers["Access-Control-Allow-Methods"] = response.headers.get("Allow", "GET, POST, OPTIONS")
        response.headers["Access-Control-Allow-Headers"] = CORS_ALLOW_HEADERS
        response.headers["Access-Control-Max-Age"] = "600"
    else:
        response.headers["Access-Control-Expose-Headers"] = "X-Request-ID"
