"""`?format=html` on POST /v1/assessments, /v1/plans and /v1/replans: the answer as a self-contained report.

The HTTP layer does not draw: the renderer (`cohop.report.render_report`, an entry-point module above this
layer) is handed in as the in-process setting `COHOP_REPORT_RENDERER` (the server and `cohop serve --dev`
install it; `create_app()` alone has none). Asked for HTML without a renderer, the app answers 406 before any
work. With one, a 200 JSON answer is rendered from the request body and the answer after the job ran; every
other answer (problem details included) stays as it was. Other `format` values are left to their own
handlers.
"""

from __future__ import annotations

import json

from apispec import BasePlugin
from flask import Flask, Response, current_app, request

from cohop.api import body, problems

HTML = "html"
#: The endpoints whose answers a report can show.
REPORT_PATHS = ("/v1/assessments", "/v1/plans", "/v1/replans")
FORMAT_PARAMETER = {
    "name": "format", "in": "query", "required": False,
    "description": "`html`: answer with a self-contained HTML report (inputs, assumptions, plan, figures, "
                   "compliance with citations, cautions, charts, baselines) instead of JSON. Errors stay "
                   "problem details. 406 when the server has no report renderer.",
    "schema": {"type": "string", "enum": [HTML]}}


def _wants_html() -> bool:
    return request.method == "POST" and request.path in REPORT_PATHS and request.args.get("format") == HTML


def register(app: Flask) -> None:
    @app.before_request
    def _renderer_present():
        if _wants_html() and request.routing_exception is None and current_app.config.get(
                "COHOP_REPORT_RENDERER") is None:
            return problems.problem(406, "Not Acceptable", "this server renders no HTML reports; ask for JSON "
                                    "and render it with `cohop chart` or the client")

    @app.after_request
    def _as_report(response: Response) -> Response:
        if not (_wants_html() and response.status_code == 200 and response.mimetype == "application/json"):
            return response
        answer = response.get_json()
        response.set_data(current_app.config["COHOP_REPORT_RENDERER"](json.loads(body.current()), answer))
        response.mimetype = "text/html"
        return response


class HtmlFormatPlugin(BasePlugin):
    """Documents the `format` parameter and the text/html answer on the report endpoints."""

    def operation_helper(self, path=None, operations=None, **kwargs):
        if path not in REPORT_PATHS:
            return
        post = (operations or {}).get("post")
        if post is None:
            return
        post.setdefault("parameters", []).append(FORMAT_PARAMETER)
        responses = post.setdefault("responses", {})
        ok = responses.get("200", responses.get(200))
        if isinstance(ok, dict):
            ok.setdefault("content", {})["text/html"] = {"schema": {"type": "string"}}
        responses.setdefault("406", "NOT_ACCEPTABLE")
