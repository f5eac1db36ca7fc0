"""Request ids, headers, auth, CORS, logs, metrics, limits and the shutdown hook, through Flask's test client."""

from __future__ import annotations

import io
import json
import logging

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from prometheus_client.parser import text_string_to_metric_families

from proportio import logging_json
from proportio.api import create_app
from proportio.api.limits import bracket_depth, deep_field
from proportio.settings import Settings

BODY = {"control": {"successes": 40, "trials": 1000}, "treatment": {"successes": 55, "trials": 1000}}


def metric(client, name: str, **labels) -> float:
    """Sum of the samples called ``name`` whose labels include ``labels``, as /metrics reports them."""
    text = client.get("/metrics").get_data(as_text=True)
    return sum(s.value for fam in text_string_to_metric_families(text) for s in fam.samples
               if s.name == name and all(s.labels.get(k) == v for k, v in labels.items()))


# ------------------------------------------------------------------------------------------------
# Request ids and headers


@pytest.mark.parametrize(("sent", "kept"), [
    ("order-7f3a", True),
    ("x" * 128, True),
    ("x" * 129, False),
    ("bad\tid", False),
    ("", False),
])
def test_request_id_is_echoed_when_reasonable_and_generated_otherwise(client, sent, kept):
    r = client.post("/v1/tests", json=BODY, headers={"X-Request-ID": sent})
    assert r.status_code == 200
    if kept:
        assert r.headers["X-Request-ID"] == sent
    else:
        assert len(r.headers["X-Request-ID"]) == 32 and int(r.headers["X-Request-ID"], 16) >= 0


def test_request_id_reaches_the_problem_body(client):
    r = client.post("/v1/tests", json={"control": BODY["control"]}, headers={"X-Request-ID": "trace-42"})
    assert r.status_code == 422 and r.get_json()["request_id"] == "trace-42"
    assert r.headers["X-Request-ID"] == "trace-42"


def test_generated_request_ids_differ(client):
    ids = {client.get("/healthz").headers["X-Request-ID"] for _ in range(50)}
    assert len(ids) == 50


@pytest.mark.parametrize(("path", "no_store"), [("/v1/methods", True), ("/healthz", True), ("/metrics", True),
                                                 ("/v1/nothing", True), ("/docs", False), ("/openapi.json", False)])
def test_headers_on_every_response(client, path, no_store):
    r = client.get(path)
    assert r.headers["X-Content-Type-Options"] == "nosniff"
    assert (r.headers.get("Cache-Control") == "no-store") is no_store
    assert "Server" not in r.headers and "X-Powered-By" not in r.headers


def test_an_unexpected_error_is_logged_with_the_request_id_and_kept_out_of_the_response(app, monkeypatch, caplog):
    from proportio import operations

    def boom(data):
        raise RuntimeError("connection string postgres://admin:hunter2@db")

    monkeypatch.setattr(operations, "run_interval", boom)
    with caplog.at_level(logging.ERROR, logger="proportio"):
        r = app.test_client().post("/v1/intervals", json={"effect": "proportion", "group": {"successes": 1,
                                                                                             "trials": 2}},
                                   headers={"X-Request-ID": "boom-1"})
    assert r.status_code == 500 and r.mimetype == "application/problem+json"
    text = r.get_data(as_text=True)
    assert "hunter2" not in text and "RuntimeError" not in text and "Traceback" not in text
    assert r.get_json()["request_id"] == "boom-1"
    [record] = [rec for rec in caplog.records if rec.levelno == logging.ERROR]
    assert record.request_id == "boom-1" and record.exc_info is not None


# ------------------------------------------------------------------------------------------------
# Auth and CORS


def test_api_tokens_guard_v1_but_not_probes_docs_or_preflight():
    c = create_app({"TESTING": True, "PROPORTIO_API_TOKENS": ("s3cret",)}).test_client()
    assert c.post("/v1/tests", json=BODY).status_code == 401
    assert c.post("/v1/tests", json=BODY, headers={"Authorization": "Bearer s3cret"}).status_code == 200
    assert c.post("/v1/tests", json=BODY, headers={"Authorization": "Basic s3cret"}).status_code == 401
    assert c.post("/v1/tests", json=BODY, headers={"Authorization": "Bearer s3cre"}).status_code == 401
    for path in ("/healthz", "/readyz", "/docs", "/openapi.json", "/metrics"):
        assert c.get(path).status_code == 200, path
    assert c.options("/v1/tests").status_code == 200
    # An unknown /v1 path answers 401, not 404: without a token nothing is learnt about what exists.
    assert c.get("/v1/secret-admin").status_code == 401


def test_metrics_token_guards_only_metrics():
    c = create_app({"TESTING": True, "PROPORTIO_METRICS_TOKEN": "scrape-me",
                    "PROPORTIO_API_TOKENS": ("api-token",)}).test_client()
    r = c.get("/metrics")
    assert r.status_code == 401 and r.headers["WWW-Authenticate"].startswith("Bearer")
    assert "Authorization" in r.get_json()["errors"]
    assert c.get("/metrics", headers={"Authorization": "Bearer api-token"}).status_code == 401
    assert c.get("/metrics", headers={"Authorization": "Bearer scrape-me"}).status_code == 200
    assert c.post("/v1/tests", json=BODY, headers={"Authorization": "Bearer scrape-me"}).status_code == 401


def test_metrics_are_open_when_no_token_is_set(client):
    r = client.get("/metrics")
    assert r.status_code == 200 and r.mimetype == "text/plain"


def test_no_cors_headers_unless_configured(client):
    r = client.post("/v1/tests", json=BODY, headers={"Origin": "https://dash.example"})
    assert "Access-Control-Allow-Origin" not in r.headers


def test_cors_for_listed_origins_only():
    c = create_app({"TESTING": True, "PROPORTIO_CORS_ORIGINS": ("https://dash.example",),
                    "PROPORTIO_API_TOKENS": ("t",)}).test_client()
    pre = c.options("/v1/tests", headers={"Origin": "https://dash.example", "Access-Control-Request-Method": "POST",
                                          "Access-Control-Request-Headers": "authorization, content-type"})
    assert pre.status_code == 200
    assert pre.headers["Access-Control-Allow-Origin"] == "https://dash.example"
    assert "POST" in pre.headers["Access-Control-Allow-Methods"]
    assert {"authorization", "content-type"} <= {h.strip().lower() for h in
                                                 pre.headers["Access-Control-Allow-Headers"].split(",")}
    assert "Origin" in pre.headers["Vary"]
    r = c.post("/v1/tests", json=BODY, headers={"Origin": "https://dash.example", "Authorization": "Bearer t"})
    assert r.status_code == 200 and r.headers["Access-Control-Allow-Origin"] == "https://dash.example"
    assert "X-Request-ID" in r.headers["Access-Control-Expose-Headers"]
    other = c.post("/v1/tests", json=BODY, headers={"Origin": "https://evil.example", "Authorization": "Bearer t"})
    assert "Access-Control-Allow-Origin" not in other.headers


def test_cors_wildcard():
    c = create_app({"TESTING": True, "PROPORTIO_CORS_ORIGINS": ("*",)}).test_client()
    r = c.get("/v1/methods", headers={"Origin": "https://anywhere.example"})
    assert r.headers["Access-Control-Allow-Origin"] == "*"


# ------------------------------------------------------------------------------------------------
# Metrics


def test_metrics_count_traffic_but_not_probes(client):
    ok = metric(client, "proportio_http_requests_total", endpoint="/v1/tests", method="POST", status="200")
    bad = metric(client, "proportio_http_requests_total", endpoint="/v1/tests", method="POST", status="422")
    probes = metric(client, "proportio_http_requests_total", endpoint="/healthz")
    latency = metric(client, "proportio_http_request_duration_seconds_count", endpoint="/v1/tests")
    pooled = metric(client, "proportio_statistical_methods_total", endpoint="/v1/tests", method="z-pooled")
    for _ in range(3):
        assert client.post("/v1/tests", json=BODY).status_code == 200
    assert client.post("/v1/tests", json={"control": BODY["control"]}).status_code == 422
    for path in ("/healthz", "/readyz", "/metrics"):
        client.get(path)
    assert metric(client, "proportio_http_requests_total", endpoint="/v1/tests", method="POST",
                  status="200") == ok + 3
    assert metric(client, "proportio_http_requests_total", endpoint="/v1/tests", method="POST",
                  status="422") == bad + 1
    assert metric(client, "proportio_http_request_duration_seconds_count", endpoint="/v1/tests") == latency + 4
    assert metric(client, "proportio_statistical_methods_total", endpoint="/v1/tests",
                  method="z-pooled") == pooled + 3
    assert metric(client, "proportio_http_requests_total", endpoint="/healthz") == probes == 0
    assert metric(client, "proportio_http_requests_total", endpoint="/metrics") == 0


def test_exact_tests_report_their_duration(client):
    before = metric(client, "proportio_exact_test_duration_seconds_count", method="fisher-exact")
    r = client.post("/v1/tests", json={"control": {"successes": 1, "trials": 12}, "treatment": {"successes": 7,
                                                                                               "trials": 11},
                                       "method": "fisher-exact"})
    assert r.status_code == 200
    assert metric(client, "proportio_exact_test_duration_seconds_count", method="fisher-exact") == before + 1
    assert metric(client, "proportio_exact_test_duration_seconds_sum", method="fisher-exact") > 0


def test_unknown_paths_and_methods_do_not_create_label_values(client):
    before = metric(client, "proportio_http_requests_total", endpoint="unmatched")
    client.get("/v1/probe-1")
    client.get("/v1/probe-2")
    client.open("/v1/tests", method="BREW")
    text = client.get("/metrics").get_data(as_text=True)
    assert "probe-1" not in text and "BREW" not in text
    assert metric(client, "proportio_http_requests_total", endpoint="unmatched") == before + 3


# ------------------------------------------------------------------------------------------------
# Logs


def test_one_json_line_per_request(app, json_log):
    c = app.test_client()
    c.post("/v1/tests", json=BODY, headers={"X-Request-ID": "log-1"})
    c.post("/v1/intervals", json={"effect": "proportion", "group": {"successes": 1, "trials": 3}})
    c.post("/v1/tests", data="{", content_type="application/json", headers={"X-Request-ID": "log-3"})
    c.get("/healthz")
    lines = [json.loads(line) for line in json_log.getvalue().splitlines()]
    assert [line["path"] for line in lines] == ["/v1/tests", "/v1/intervals", "/v1/tests"]
    first, second, third = lines
    assert first["request_id"] == "log-1" and first["method"] == "POST" and first["status"] == 200
    assert first["statistical_method"] == "z-pooled" and first["duration_ms"] > 0
    assert first["logger"] == "proportio.access" and first["level"] == "info" and first["time"].endswith("Z")
    assert second["statistical_method"] == "wilson"
    assert third["status"] == 400 and third["request_id"] == "log-3" and "statistical_method" not in third


def test_other_log_records_are_json_too(json_log):
    log = logging.getLogger("proportio.test")
    try:
        raise ValueError("inner detail")
    except ValueError:
        log.exception("something failed", extra={"request_id": "r-9"})
    record = json.loads(json_log.getvalue())
    assert record["message"] == "something failed" and record["request_id"] == "r-9"
    assert record["level"] == "error" and "ValueError: inner detail" in record["exception"]


def test_configure_leaves_a_host_applications_logging_alone():
    logger = logging.getLogger("proportio")
    saved = (logger.handlers[:], logger.propagate)
    theirs = logging.NullHandler()
    logger.handlers[:] = [theirs]
    try:
        logging_json.configure("INFO")
        assert logger.handlers == [theirs]
    finally:
        logger.handlers[:], logger.propagate = saved


# ------------------------------------------------------------------------------------------------
# Limits and settings


nested_json = st.recursive(
    st.one_of(st.integers(), st.text(alphabet='{}[]"\\ab', max_size=6), st.none(), st.booleans()),
    lambda children: st.lists(children, max_size=3) | st.dictionaries(st.text(alphabet='{["\\k', max_size=3),
                                                                        children, max_size=3),
    max_leaves=30)


def _depth(value) -> int:
    if isinstance(value, dict):
        return 1 + max((_depth(v) for v in value.values()), default=0)
    if isinstance(value, list):
        return 1 + max((_depth(v) for v in value), default=0)
    return 0


@settings(max_examples=300, deadline=None, derandomize=True)
@given(nested_json, st.integers(min_value=1, max_value=8))
def test_depth_guard_agrees_with_a_plain_recursive_count(value, limit):
    # Brackets, quotes and backslashes inside strings must not count: the alphabet is full of them.
    raw = json.dumps(value).encode()
    assert bracket_depth(raw) == _depth(value)
    found = deep_field(value, raw, limit)
    assert (found is None) == (_depth(value) <= limit)
    if found is not None and isinstance(value, dict):
        assert found in value and _depth(value[found]) >= limit


def test_settings_reject_nonsense(monkeypatch):
    monkeypatch.setenv("PROPORTIO_MAX_JSON_DEPTH", "2")
    with pytest.raises(ValueError, match="PROPORTIO_MAX_JSON_DEPTH must be at least 4"):
        Settings.from_env()
    monkeypatch.setenv("PROPORTIO_MAX_JSON_DEPTH", "deep")
    with pytest.raises(ValueError, match="whole number"):
        Settings.from_env()
    monkeypatch.delenv("PROPORTIO_MAX_JSON_DEPTH")
    monkeypatch.setenv("PROPORTIO_LOG_LEVEL", "chatty")
    with pytest.raises(ValueError, match="PROPORTIO_LOG_LEVEL"):
        Settings.from_env()


def test_settings_reach_the_app(monkeypatch):
    monkeypatch.setenv("PROPORTIO_MAX_JSON_DEPTH", "6")
    monkeypatch.setenv("PROPORTIO_CORS_ORIGINS", "https://a.example, https://b.example")
    monkeypatch.setenv("PROPORTIO_METRICS_TOKEN", " m ")
    app = create_app({"TESTING": True})
    assert app.config["PROPORTIO_MAX_JSON_DEPTH"] == 6
    assert app.config["PROPORTIO_CORS_ORIGINS"] == ("https://a.example", "https://b.example")
    assert app.config["PROPORTIO_METRICS_TOKEN"] == "m"


# ------------------------------------------------------------------------------------------------
# Gunicorn hooks (the real server is exercised in test_served.py and test_graceful_shutdown.py)


class _FakeWorker:
    def __init__(self, app):
        self.wsgi = app
        self.sockets = []
        self.pid = 4242


def test_shutdown_flips_readiness(app):
    from proportio import gunicorn_conf

    c = app.test_client()
    assert c.get("/readyz").status_code == 200
    gunicorn_conf.begin_shutdown(_FakeWorker(app))
    r = c.get("/readyz")
    assert r.status_code == 503 and r.get_json()["status"] == "unavailable"
    assert c.get("/healthz").status_code == 200


def test_timeout_hook_names_the_request_in_flight(app, caplog):
    from proportio import gunicorn_conf
    from proportio.api import observability

    observability.CURRENT.update(request_id="slow-1", path="/v1/tests")
    try:
        with caplog.at_level(logging.ERROR, logger="proportio"):
            gunicorn_conf.worker_abort(_FakeWorker(app))
    finally:
        observability.CURRENT.clear()
    [record] = caplog.records
    assert record.getMessage() == "worker timed out" and record.request_id == "slow-1" and record.path == "/v1/tests"


def test_gunicorn_is_told_not_to_announce_itself():
    import gunicorn.http.wsgi

    from proportio import gunicorn_conf

    assert gunicorn.http.wsgi.SERVER == "proportio" and "gunicorn" not in gunicorn_conf.proc_name
    assert gunicorn_conf.control_socket_disable is True


def _streamed(app, body: bytes):
    """Send ``body`` as a server does with a chunked upload: no Content-Length, the stream ends by itself."""
    environ = {"REQUEST_METHOD": "POST", "PATH_INFO": "/v1/tests", "SERVER_NAME": "x", "SERVER_PORT": "80",
               "SERVER_PROTOCOL": "HTTP/1.1", "wsgi.url_scheme": "http", "wsgi.input": io.BytesIO(body),
               "wsgi.input_terminated": True, "CONTENT_TYPE": "application/json", "wsgi.errors": io.StringIO()}
    status = []
    out = b"".join(app(environ, lambda s, h, e=None: status.append(s)))
    return int(status[0].split()[0]), json.loads(out)


def test_streamed_body_limit_is_exact():
    body = json.dumps(BODY).encode()
    app = create_app({"TESTING": True, "MAX_CONTENT_LENGTH": len(body)})
    assert _streamed(app, body)[0] == 200  # exactly at the limit: accepted
    status, problem = _streamed(app, body + b" ")  # one byte over: refused, not cut and misread
    assert status == 413 and "body" in problem["errors"]
