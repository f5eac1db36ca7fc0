"""Shared fixtures: the Flask app and its test client (create_app with TESTING on), the JSON log buffer."""

from __future__ import annotations

import io
import logging

import pytest

from proportio import logging_json
from proportio.api import create_app


@pytest.fixture
def app():
    return create_app({"TESTING": True})


@pytest.fixture
def client(app):
    return app.test_client()


@pytest.fixture
def json_log():
    """Route the proportio loggers through the JSON handler into a buffer, as under gunicorn."""
    logger = logging.getLogger("proportio")
    saved = (logger.handlers[:], logger.propagate, logger.level, logging_json._handler)
    logger.handlers.clear()
    logging_json.configure("INFO")
    buffer = io.StringIO()
    logging_json._handler.setStream(buffer)
    yield buffer
    logger.handlers[:], logger.propagate, logger.level, logging_json._handler = saved
