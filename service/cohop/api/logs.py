"""Structured JSON logs with a request id (accepted from, and returned in, X-Request-Id).

No log line carries a request body, a token or any other secret: the access
line has the method, the route pattern, the status, the duration and the
request id only.
"""

from __future__ import annotations

import json
import logging
import re
import time
import uuid

from flask import Flask, g, request

HEADER = "X-Request-Id"
_VALID = re.compile(r"^[A-Za-z0-9._-]{1,64}$")


class JsonFormatter(logging.Formatter):
    FIELDS = ("request_id", "method", "route", "status", "duration_ms", "remote")

    def format(self, record: logging.LogRecord) -> str:
        line = {"time": self.formatTime(record, "%Y-%m-%dT%H:%M:%S"), "level": record.levelname,
                "logger": record.name, "message": record.getMessage()}
        for key in self.FIELDS:
            if hasattr(record, key):
                line[key] = getattr(record, key)
        if record.exc_info:
            line["error"] = self.formatException(record.exc_info).splitlines()[-1]
        return json.dumps(line)


def configure(level: str = "INFO") -> None:
    handler = logging.StreamHandler()
    handler.setFormatter(JsonFormatter())
    root = logging.getLogger("cohop")
    root.handlers[:] = [handler]
    root.setLevel(level.upper())
    root.propagate = False


def register(app: Flask) -> None:
    log = logging.getLogger("cohop.access")

    @app.before_request
    def _request_id():
        given = request.headers.get(HEADER, "")
        g.request_id = given if _VALID.match(given) else uuid.uuid4().hex
        g.cohop_log_start = time.monotonic()

    @app.after_request
    def _access(response):
        rid = g.get("request_id") or uuid.uuid4().hex
        response.headers[HEADER] = rid
        rule = request.url_rule.rule if request.url_rule is not None else "unmatched"
        log.info("request", extra={"request_id": rid, "method": request.method, "route": rule,
                                   "status": response.status_code,
                                   "duration_ms": round((time.monotonic() - g.get("cohop_log_start", time.monotonic()))
                                                        * 1e3, 1)})
        return response
