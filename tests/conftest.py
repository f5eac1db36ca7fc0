"""Shared fixtures: the Flask app and its test client (create_app with TESTING on)."""

from __future__ import annotations

import pytest

from proportio.api import create_app


@pytest.fixture
def app():
    return create_app({"TESTING": True})


@pytest.fixture
def client(app):
    return app.test_client()
