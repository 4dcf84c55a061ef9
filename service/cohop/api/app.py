"""The application factory."""

from __future__ import annotations

import http

import flask
from flask_smorest import Api

from cohop import __version__
from cohop.api import problems
from cohop.api.schemas.problem import ProblemSchema
from cohop.config import in_process_config

#: Flask and OpenAPI settings; the service's own (COHOP_*) come from `cohop.config`.
API_SETTINGS = {
    "COHOP_PROGRESS_HOOK": None,  # in-process only: called with solver progress
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


class CohopApi(Api):
    """flask-smorest's Api with RFC 9457 problem details as the documented error body."""

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
    from cohop.api import auth, logs, metrics, solving

    logs.register(app)
    metrics.register(app)
    auth.register(app)
    app.before_request(_require_json)
    api = CohopApi(app)
    solving.register(app)
    from cohop.api.views import assessments, meta, plans, profiles, replans

    for blp in (assessments.blp, plans.blp, replans.blp, profiles.blp, meta.blp):
        api.register_blueprint(blp)
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
