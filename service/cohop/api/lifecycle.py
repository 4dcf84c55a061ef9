"""Process state that readiness reports: draining after SIGTERM (set by the gunicorn hook)."""

from __future__ import annotations

import threading

DRAINING = threading.Event()


def mark_draining() -> None:
    DRAINING.set()
