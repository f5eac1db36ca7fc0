"""Fuzz every operation of the served OpenAPI document (schemathesis, in-process through WSGI).

Every generated request, valid or deliberately invalid, must be answered without a 5xx, with a status
code the document lists for the operation, the documented media type, and a body that matches the
documented schema. New endpoints are covered as soon as they are registered.

Bounded and reproducible: PROPORTIO_FUZZ_EXAMPLES examples per operation (default 15), derandomized.
A longer run: PROPORTIO_FUZZ_EXAMPLES=500 python -m pytest -p no:xdist tests/hardening/test_fuzz_openapi.py
"""

from __future__ import annotations

import os

import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (
    content_type_conformance,
    negative_data_rejection,
    response_schema_conformance,
    status_code_conformance,
)

from proportio.api import create_app

EXAMPLES = int(os.environ.get("PROPORTIO_FUZZ_EXAMPLES", "15"))
CHECKS = [not_a_server_error, status_code_conformance, content_type_conformance, response_schema_conformance,
          negative_data_rejection]

schema = schemathesis.openapi.from_wsgi("/openapi.json", create_app())


@schema.parametrize()
@settings(max_examples=EXAMPLES, derandomize=True, deadline=None, database=None,
          suppress_health_check=list(HealthCheck))
def test_every_operation_answers_within_its_documented_contract(case):
    case.call_and_validate(checks=CHECKS)
