"""The application factory."""

from __future__ import annotations

import http

import flask
from apispec import BasePlugin
from flask_smorest import Api

from cohop import __version__
from cohop.api import problems
from cohop.api.schemas.problem import ProblemSchema
from cohop.config import in_process_config

#: Flask and OpenAPI settings; the service's own (COHOP_*) come from `cohop.config`.
API_SETTINGS = {
    "COHOP_PROGRESS_HOOK": None,  # in-process only: called with solver progress
    "COHOP_REPORT_RENDERER": None,  # in-process only: (request, answer) -> HTML for ?format=html (answer_formats)
    "API_TITLE": "cohop",
    "API_VERSION": __version__,
    "OPENAPI_VERSION": "3.0.3",
    "OPENAPI_URL_PREFIX": "/",
    "OPENAPI_JSON_PATH": "openapi.json",
    "API_SPEC_OPTIONS": {
        "info": {"description": "Interference-aware channel planning for co-located frequency-hopping networks. "
                                "Every answer is a planning estimate: confirm it with a site survey; local "
                                "regulations, the regulator and licensed practice prevail."},
    },
}


#: The security scheme every operation outside `auth.OPEN_PATHS` declares.
BEARER = "bearerAuth"
BEARER_REQUIRED = "BEARER_REQUIRED"


class BearerSecurityPlugin(BasePlugin):
    """Declares bearer authentication on every operation that needs a token, with its 401 answer."""

    def __init__(self, open_paths):
        self.open_paths = set(open_paths)

    def operation_helper(self, path=None, operations=None, **kwargs):
        if path in self.open_paths:
            return
        for operation in (operations or {}).values():
            operation.setdefault("security", [{BEARER: []}])
            if operation["security"]:
                operation.setdefault("responses", {}).setdefault("401", BEARER_REQUIRED)


class CohopApi(Api):
    """flask-smorest's Api with RFC 9457 problem details as the documented error body, and bearer auth."""

    ERROR_SCHEMA = ProblemSchema

    def _register_responses(self):
        for status in http.HTTPStatus:
            response = {"description": status.phrase}
            if status >= 400:
                response["content"] = {problems.PROBLEM_JSON: {"schema": self.ERROR_SCHEMA}}
            self.spec.components.response(status.name, response, lazy=True)
        self.spec.components.response(
            "DEFAULT_ERROR", {"description": "Problem details (RFC 9457)",
                              "content": {problems.PROBLEM_JSON: {"schema": self.ERROR_SCHEMA}}}, lazy=True)
        self.spec.components.security_scheme(BEARER, {
            "type": "http", "scheme": "bearer",
            "description": "Required when the server has tokens (COHOP_TOKENS or COHOP_TOKENS_FILE); "
                           "/v1/health, /v1/ready and /openapi.json are always open."})
        self.spec.components.response(BEARER_REQUIRED, {
            "description": "Missing or wrong bearer token (when the server has tokens)",
            "headers": {"WWW-Authenticate": {"description": 'Bearer realm="cohop" with the error code',
                                             "schema": {"type": "string"}}},
            "content": {problems.PROBLEM_JSON: {"schema": self.ERROR_SCHEMA}}}, lazy=True)

    def document_metrics(self, public: bool) -> None:
        """GET /metrics (served by `api/metrics.py`, outside the blueprints) in the document."""
        rule = next(r for r in self._app.url_map.iter_rules() if r.rule == "/metrics")
        self.spec.path(rule=rule, operations={"get": {
            "summary": "Prometheus metrics (text exposition format)",
            "description": "Request counts and latency by route, solve time and status, solves in progress, "
                           "rejections. Needs a bearer token when the server has tokens, unless "
                           "COHOP_METRICS_PUBLIC is true.",
            "tags": ["meta"],
            **({"security": []} if public else {}),
            "responses": {"200": {"description": "OK", "content": {"text/plain": {"schema": {
                "type": "string", "description": "Prometheus text exposition format 0.0.4"}}}},
                "default": "DEFAULT_ERROR"}}})

    def _register_error_handlers(self):
        problems.register(self._app)


def _require_json():
    req = flask.request
    if req.routing_exception is not None:  # let the 404 or 405 through
        return
    if req.method in ("POST", "PUT", "PATCH") and not req.is_json:
        flask.abort(415, description="send the body as application/json")


def create_app(config: dict | None = None) -> flask.Flask:
    app = flask.Flask("cohop")
    app.config.update(in_process_config())
    app.config.update(API_SETTINGS)
    app.config.update(config or {})
    app.config["MAX_CONTENT_LENGTH"] = app.config["COHOP_MAX_BODY_BYTES"]  # Flask's name for the same cap
    app.json = problems.StrictJSONProvider(app)  # answers are strict JSON: no NaN or infinity
    app.json.sort_keys = False
    from cohop.api import answer_formats, auth, body, logs, metrics, solver_runner

    logs.register(app)
    metrics.register(app)
    auth.register(app)
    app.before_request(_require_json)
    body.register(app)  # the body is read once, capped, after the checks above and before any parsing
    answer_formats.register(app)
    api = CohopApi(app, spec_kwargs={"extra_plugins": [BearerSecurityPlugin(auth.OPEN_PATHS),
                                                       answer_formats.HtmlFormatPlugin()]})
    solver_runner.register(app)
    from cohop.api.views import assessments, hop_tables, meta, plans, profiles, replans

    for blp in (assessments.blp, plans.blp, replans.blp, hop_tables.blp, profiles.blp, meta.blp):
        api.register_blueprint(blp)
    api.document_metrics(public=bool(app.config.get("COHOP_METRICS_PUBLIC")))
    return app


def create_app_from_env() -> flask.Flask:
    """The production app: settings from COHOP_ variables (validated), JSON logs, isolated solves."""
    import logging

    from cohop.api import logs
    from cohop.config import from_env

    settings = from_env()
    logs.configure(settings.log_level)
    logging.getLogger("cohop.start").info("settings " + str(settings.public()))
    return create_app(settings.flask_config())
