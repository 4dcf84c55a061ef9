"""Every error leaves through here as RFC 9457 problem details."""

from __future__ import annotations

import json
import logging

from flask import Flask, Response, request
from flask.json.provider import DefaultJSONProvider
from werkzeug.exceptions import HTTPException, InternalServerError

from cohop import limits
from cohop.errors import PlanInfeasible, SiteError

PROBLEM_JSON = "application/problem+json"
VALIDATION = "urn:cohop:problem:invalid-request"
SITE = "urn:cohop:problem:site-not-evaluable"
INFEASIBLE = "urn:cohop:problem:no-feasible-plan"
NOT_FOUND_IN_TIME = "urn:cohop:problem:no-plan-found-in-time"

log = logging.getLogger("cohop.api")


def problem(status: int, title: str, detail: str | None = None, type_: str = "about:blank",
            errors: list[dict] | None = None, headers: dict | None = None, **extensions) -> Response:
    body = {"type": type_, "title": title, "status": status}
    if detail:
        body["detail"] = detail
    body["instance"] = request.path if request else ""
    if errors:
        body["errors"] = [_short(e) for e in errors[:limits.MAX_FIELD_ERRORS]]
        if len(errors) > limits.MAX_FIELD_ERRORS:
            body["errors_omitted"] = len(errors) - limits.MAX_FIELD_ERRORS
    body.update(extensions)
    resp = Response(json.dumps(body, allow_nan=False), status=status, mimetype=PROBLEM_JSON)
    for k, v in (headers or {}).items():
        resp.headers[k] = v
    return resp


#: Longest pointer or detail echoed back (an unknown key may be megabytes long).
_ECHO_CHARS = 500


def _short(error: dict) -> dict:
    return {k: v if len(v) <= _ECHO_CHARS else v[:_ECHO_CHARS] + "... (cut)" for k, v in error.items()}


class NonFiniteNumber(ValueError):
    """A response would carry NaN or infinity: a bug (an admitted input reached a non-finite figure)."""


class StrictJSONProvider(DefaultJSONProvider):
    """Flask's JSON provider refusing NaN and infinity, which are not JSON (RFC 8259)."""

    def dumps(self, obj, **kwargs):
        kwargs["allow_nan"] = False
        try:
            return super().dumps(obj, **kwargs)
        except ValueError as err:
            raise NonFiniteNumber(str(err)) from None


def _escape(token) -> str:
    return str(token).replace("~", "~0").replace("/", "~1")


def flatten_messages(messages, prefix: str = "") -> list[dict]:
    """marshmallow's nested messages -> [{pointer, detail}], sorted by pointer."""
    out = []
    if isinstance(messages, dict):
        for key, value in messages.items():
            path = prefix if key == "_schema" else f"{prefix}/{_escape(key)}"
            out.extend(flatten_messages(value, path))
    elif isinstance(messages, list) and all(isinstance(m, str) for m in messages):
        out.extend({"pointer": prefix or "", "detail": m} for m in messages)
    elif isinstance(messages, list):
        for m in messages:
            out.extend(flatten_messages(m, prefix))
    else:
        out.append({"pointer": prefix or "", "detail": str(messages)})
    return sorted(out, key=lambda e: e["pointer"])


def _http_exception(err: HTTPException):
    data = getattr(err, "data", None) or {}
    messages = data.get("messages")
    if err.code == 422 and messages is not None:
        body_messages = messages.get("json", messages) if isinstance(messages, dict) else messages
        errors = flatten_messages(body_messages)
        shown = f" (the first {limits.MAX_FIELD_ERRORS} listed)" if len(errors) > limits.MAX_FIELD_ERRORS else ""
        return problem(422, "Invalid request", f"{len(errors)} field(s) failed validation{shown}", VALIDATION, errors)
    if err.code == 413:
        return problem(413, "Request body too large",
                       f"the body exceeds this server's cap of {request.max_content_length} bytes")
    headers = {k: v for k, v in (data.get("headers") or {}).items()}
    if err.code == 405 and err.valid_methods:
        headers["Allow"] = ", ".join(err.valid_methods)
    return problem(err.code or 500, err.name, data.get("message") or err.description, headers=headers)


def _site_error(err: SiteError):
    errors = [{"pointer": p, "detail": m} for p, m in err.problems]
    return problem(422, "Site cannot be evaluated", "; ".join(m for _, m in err.problems), SITE, errors)


def _infeasible(err: PlanInfeasible):
    conflicts = [{"requirement": c.requirement, "systems": list(c.systems), "detail": c.detail,
                  "citation": c.citation, "channels": [list(r) for r in c.channels], "relax": c.relax}
                 for c in err.conflicts]
    if err.proven:
        return problem(422, "No plan meets the requirements", "these requirements conflict: " + "; ".join(
            c.detail for c in err.conflicts), INFEASIBLE, conflicts=conflicts, proven=True)
    return problem(422, "No plan found in time", "no plan meeting every requirement was found within the time "
                   "limit, and none was proven impossible: " + "; ".join(c.detail for c in err.conflicts),
                   NOT_FOUND_IN_TIME, conflicts=conflicts, proven=False)


def _non_finite(err: NonFiniteNumber):
    log.error("non-finite number in the answer to %s %s: %s", request.method, request.path, err)
    return _http_exception(InternalServerError())


def _unexpected(err: Exception):
    if isinstance(err, HTTPException):
        return _http_exception(err)
    log.exception("unhandled error")
    return _http_exception(InternalServerError())


def register(app: Flask) -> None:
    app.register_error_handler(HTTPException, _http_exception)
    app.register_error_handler(SiteError, _site_error)
    app.register_error_handler(PlanInfeasible, _infeasible)
    app.register_error_handler(NonFiniteNumber, _non_finite)
    app.register_error_handler(Exception, _unexpected)
