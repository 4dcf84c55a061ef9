"""flask-smorest Blueprint whose body parser reads the body through `cohop.api.body` (once, capped) and
turns every unparseable body into a 400."""

from __future__ import annotations

import json

import flask_smorest
from flask_smorest import abort
from webargs import core
from webargs.flaskparser import FlaskParser, is_json_request

from cohop.api import body
from cohop.api.schemas.plan import InfeasibleProblemSchema


class BodyParser(FlaskParser):
    """webargs' parser on the body `cohop.api.body` read (413 over the cap, 408 for a stalled client, before
    any parsing), also catching what json.loads raises besides JSONDecodeError (too deep nesting, integers
    beyond Python's digit limit)."""

    def _raw_load_json(self, req):
        if not is_json_request(req):
            return core.missing
        try:
            return core.parse_json(body.current())
        except json.JSONDecodeError:
            raise
        except (RecursionError, ValueError) as err:
            abort(400, message=f"the body is not usable JSON: {type(err).__name__}: {str(err)[:200]}")

    def _handle_invalid_json_error(self, error, req, *args, **kwargs):
        abort(400, message=f"the body is not valid JSON: {error}")


class Blueprint(flask_smorest.Blueprint):
    ARGUMENTS_PARSER = BodyParser()

    def body_errors(self):
        """The answers every endpoint taking a JSON body may give besides its own."""
        def decorate(func):
            func = self.alt_response(415, response="UNSUPPORTED_MEDIA_TYPE")(func)
            func = self.alt_response(408, response="REQUEST_TIMEOUT")(func)
            func = self.alt_response(413, response="REQUEST_ENTITY_TOO_LARGE")(func)
            return self.alt_response(400, response="BAD_REQUEST")(func)
        return decorate

    def solver_errors(self, what: str):
        """The extra answers of a solving endpoint: 422 with conflicts, 503 with Retry-After."""
        def decorate(func):
            func = self.alt_response(503, response="SERVICE_UNAVAILABLE", headers={"Retry-After": {
                "description": "Seconds to wait before trying again", "schema": {"type": "integer"}}})(func)
            return self.alt_response(422, schema=InfeasibleProblemSchema, content_type="application/problem+json",
                                     description=f"Invalid request, or no {what} meets the requirements (with the "
                                                 "conflicting ones)")(func)
        return decorate
