"""Fixtures shared by every test folder; a folder's own conftest may override them."""

from __future__ import annotations

import pytest

from cohop.api.app import create_app


@pytest.fixture(scope="session")
def app():
    """One service instance for the session (tests that change its settings make their own)."""
    return create_app({"TESTING": True})


@pytest.fixture(scope="session")
def client(app):
    return app.test_client()
