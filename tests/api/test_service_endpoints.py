"""Health, readiness, the catalogue, the OpenAPI document and the docs page."""

from __future__ import annotations

import json
import pathlib

from proportio.api.openapi import build_spec, spec_json
from proportio.stats import intervals, twogroup

COMMITTED = pathlib.Path(__file__).resolve().parents[2] / "openapi" / "openapi.json"


def test_health_and_readiness(client):
    assert client.get("/healthz").get_json()["status"] == "ok"
    assert client.get("/readyz").get_json()["status"] == "ready"


def test_readiness_fails_while_not_ready(app):
    app.config["PROPORTIO_READY"] = False
    assert app.test_client().get("/readyz").status_code == 503


def test_committed_openapi_document_matches_the_code():
    # Regenerate with: python -m proportio.api (see DEVELOPERS.md).
    assert COMMITTED.read_text() == spec_json(build_spec()), "openapi/openapi.json is stale: regenerate it"


def test_served_openapi_document_is_the_committed_one(client):
    r = client.get("/openapi.json")
    assert r.get_json() == json.loads(COMMITTED.read_text())
    assert r.get_json()["openapi"].startswith("3.1")


def test_openapi_lists_every_endpoint_and_problem_responses():
    spec = build_spec()
    assert {"/v1/tests", "/v1/intervals", "/v1/methods", "/healthz", "/readyz", "/openapi.json", "/docs"} <= set(
        spec["paths"])
    assert "application/problem+json" in spec["paths"]["/v1/tests"]["post"]["responses"]["422"]["content"]


def test_docs_page_is_self_contained_html(client):
    r = client.get("/docs")
    assert r.status_code == 200 and r.mimetype == "text/html"
    page = r.get_data(as_text=True)
    assert "/v1/tests" in page and "<script" not in page and "http://" not in page and "https://" not in page


def test_catalogue_covers_every_method_with_references_and_cautions(client):
    body = client.get("/v1/methods").get_json()
    names = {m["name"] for m in body["methods"]}
    assert set(twogroup.METHODS) <= names
    assert {m for ms in intervals.METHODS.values() for m in ms} <= names
    assert all(m["references"] for m in body["methods"])
    cautions = " ".join(body["cautions"])
    assert "not a decision" in cautions and "statistician" in cautions


def test_security_headers_and_request_id(client):
    r = client.post("/v1/tests", json={"control": {"successes": 1, "trials": 2}, "treatment": {"successes": 1,
                                                                                              "trials": 2}},
                    headers={"X-Request-ID": "abc-123"})
    assert r.headers["X-Request-ID"] == "abc-123"
    assert r.headers["X-Content-Type-Options"] == "nosniff"
    assert r.headers["Cache-Control"] == "no-store"
    assert len(client.get("/healthz").headers["X-Request-ID"]) == 32


def test_bearer_auth_when_tokens_are_configured():
    from proportio.api import create_app

    app = create_app({"TESTING": True, "PROPORTIO_API_TOKENS": ("s3cret", "other")})
    c = app.test_client()
    body = {"control": {"successes": 1, "trials": 2}, "treatment": {"successes": 1, "trials": 2}}
    r = c.post("/v1/tests", json=body)
    assert r.status_code == 401 and r.headers["WWW-Authenticate"].startswith("Bearer")
    assert c.post("/v1/tests", json=body, headers={"Authorization": "Bearer wrong"}).status_code == 401
    assert c.post("/v1/tests", json=body, headers={"Authorization": "Bearer other"}).status_code == 200
    assert c.get("/healthz").status_code == 200 and c.get("/docs").status_code == 200


def test_auth_off_leaves_everything_open(client):
    body = {"control": {"successes": 1, "trials": 2}, "treatment": {"successes": 1, "trials": 2}}
    assert client.post("/v1/tests", json=body).status_code == 200
    assert client.post("/v1/tests", json=body, headers={"Authorization": "Bearer anything"}).status_code == 200
    assert client.get("/metrics").status_code == 200


def test_metrics_token_is_separate_from_the_api_tokens():
    from proportio.api import create_app

    c = create_app({"TESTING": True, "PROPORTIO_API_TOKENS": ("api",), "PROPORTIO_METRICS_TOKEN": "scrape"}
                   ).test_client()
    assert c.get("/metrics").status_code == 401
    assert c.get("/metrics", headers={"Authorization": "Bearer api"}).status_code == 401
    r = c.get("/metrics", headers={"Authorization": "Bearer scrape"})
    assert r.status_code == 200 and "proportio_http_requests_total" in r.get_data(as_text=True)
    assert c.get("/healthz").status_code == 200 and c.get("/readyz").status_code == 200


def test_metrics_is_a_documented_service_operation():
    op = build_spec()["paths"]["/metrics"]["get"]
    assert op["tags"] == ["service"] and "401" in op["responses"]
