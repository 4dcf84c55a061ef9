"""Optional bearer tokens (several, for rotation), compared in constant time."""

from __future__ import annotations

import hmac

from flask import Flask, current_app, request

from cohop.api import problems

#: Always open: probes and the API description.
OPEN_PATHS = {"/v1/health", "/v1/ready", "/openapi.json"}


def _presented() -> str | None:
    header = request.headers.get("Authorization", "")
    scheme, _, token = header.partition(" ")
    return token.strip() if scheme.lower() == "bearer" and token.strip() else None


def authorised(tokens, presented: str | None) -> bool:
    """True if `presented` equals one of `tokens`; every token is compared, so timing shows nothing."""
    if presented is None:
        return False
    given = presented.encode()
    ok = False
    for t in tokens:
        ok |= hmac.compare_digest(given, t.encode())
    return ok


def register(app: Flask) -> None:
    @app.before_request
    def _check():
        tokens = current_app.config.get("COHOP_TOKENS") or ()
        if not tokens or request.path in OPEN_PATHS:
            return None
        if request.path == "/metrics" and current_app.config.get("COHOP_METRICS_PUBLIC"):
            return None
        if authorised(tokens, _presented()):
            return None
        reason = "invalid_token" if request.headers.get("Authorization") else "invalid_request"
        return problems.problem(401, "Unauthorised", "send Authorization: Bearer <token>", "about:blank",
                                headers={"WWW-Authenticate": f'Bearer realm="cohop", error="{reason}"'})
