"""The request body, read once, with the size cap, whatever its framing.

A body announced by Content-Length is refused with 413 before a byte of it is
read when the length is over COHOP_MAX_BODY_BYTES; a chunked body (no
Content-Length; the server dechunks it and says so with
`wsgi.input_terminated`) is read up to one byte past the cap, and that byte
means 413. Either way nothing is parsed before the whole body is in. A client
that stops sending gets 408; a body that cannot be read (a broken chunk, a
connection that ends early) gets 400. Every answer is problem details, through
the usual handler.
"""

from __future__ import annotations

from flask import Flask, current_app, g, request
from flask_smorest import abort
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge
from werkzeug.wsgi import get_content_length

#: Methods whose body is read (the others carry none here).
BODY_METHODS = frozenset({"POST", "PUT", "PATCH"})
READ_STEP = 64 * 1024


class ClientTimeout(Exception):
    """The client stopped sending within the server's client timeout.

    Raised by the production server's socket reader (`cohop.server`). It is not
    an OSError on purpose: gunicorn treats those as a dead connection and
    answers nothing, while this one is answered with 408.
    """


def read_capped(environ: dict, cap: int) -> bytes:
    """The whole body from the WSGI environ, at most `cap` bytes (else 413)."""
    length = get_content_length(environ)
    if length is not None and length > cap:
        raise RequestEntityTooLarge()
    if length is None and not environ.get("wsgi.input_terminated"):
        return b""  # neither a length nor a server-terminated stream: no body can be read safely
    stream = environ["wsgi.input"]
    limit = cap + 1 if length is None else length
    parts, size = [], 0
    while size < limit:
        piece = _read(stream, min(READ_STEP, limit - size))
        if not piece:
            break
        parts.append(piece)
        size += len(piece)
    if size > cap:
        raise RequestEntityTooLarge()
    if length is not None and size < length:
        abort(400, message=f"the body ended after {size} of the {length} bytes its Content-Length announced")
    return b"".join(parts)


def _read(stream, size: int) -> bytes:
    try:
        return stream.read(size)
    except (ClientTimeout, TimeoutError):
        abort(408, message="the request body stopped arriving: no data within the server's client timeout "
                           "(COHOP_CLIENT_TIMEOUT_S)")
    except HTTPException:
        raise
    except Exception as err:  # a malformed chunk, a reset connection: whatever the server's reader raises
        abort(400, message=f"the body could not be read: {type(err).__name__}: {str(err)[:200]}")


def current() -> bytes:
    """This request's body (read now if the hook has not read it yet)."""
    if "cohop_body" not in g:
        g.cohop_body = read_capped(request.environ, current_app.config["COHOP_MAX_BODY_BYTES"])
    return g.cohop_body


def register(app: Flask) -> None:
    """Read every body up front, after authentication and the media-type check and before any parsing."""
    @app.before_request
    def _read_body():
        if request.routing_exception is None and request.method in BODY_METHODS:
            current()
