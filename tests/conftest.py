"""Fixtures shared by every test folder; a folder's own conftest may override them."""

from __future__ import annotations

import os

import pytest

from cohop.api.app import create_app
from cohop.planning import calibration

# Work budgets at the calibration as written, whatever this machine's speed, so that the tests' work counts
# and plans do not depend on the machine (tests/planning/test_calibration.py measures it): in this process,
# and in every server or fork server the tests start (COHOP_WORK_SPEED).
calibration.pin(1.0)
os.environ.setdefault("COHOP_WORK_SPEED", "1")


@pytest.fixture(scope="session")
def app():
    """One service instance for the session (tests that change its settings make their own)."""
    return create_app({"TESTING": True})


@pytest.fixture(scope="session")
def client(app):
    return app.test_client()
