"""flask-smorest Blueprint whose body parser turns every unparseable body into a 400."""

from __future__ import annotations

import json

import flask_smorest
from flask_smorest import abort
from webargs import core
from webargs.flaskparser import FlaskParser, is_json_request


class BodyParser(FlaskParser):
    """webargs' parser, also catching what json.loads raises besides JSONDecodeError
    (too deep nesting, integers beyond Python's digit limit)."""

    def _raw_load_json(self, req):
        if not is_json_request(req):
            return core.missing
        try:
            return core.parse_json(req.get_data(cache=True))
        except json.JSONDecodeError:
            raise
        except (RecursionError, ValueError) as err:
            abort(400, message=f"the body is not usable JSON: {type(err).__name__}: {str(err)[:200]}")

    def _handle_invalid_json_error(self, error, req, *args, **kwargs):
        abort(400, message=f"the body is not valid JSON: {error}")


class Blueprint(flask_smorest.Blueprint):
    ARGUMENTS_PARSER = BodyParser()
