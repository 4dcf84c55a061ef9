"""The production server: gunicorn with a draining arbiter and a worker that bounds slow clients.

`python -m cohop.server` (the image's entry point) and `cohop serve` run it;
settings come from the COHOP_ variables (`cohop.config`, `cohop.gunicorn_conf`).

Shutdown. On SIGTERM the arbiter marks the process draining (`/v1/ready`
answers 503 in every worker) but keeps its listeners and workers serving for
COHOP_DRAIN_S seconds, so a load balancer or Kubernetes sees readiness fail
and stops sending work while requests already on their way are answered.
Then it stops the way gunicorn always does: listeners closed, workers told to
finish in-flight requests within COHOP_GRACEFUL_TIMEOUT_S, exit. A second
SIGTERM ends the drain at once; SIGINT and SIGQUIT stop at once.

Slow clients. `CohopWorker` is gunicorn's threaded worker whose connections
read with a timeout (COHOP_CLIENT_TIMEOUT_S): the header block must be in
within it, each body read and each write must progress within it. A stalled
header read is answered 408 here; a stalled body read raises
`cohop.api.body.ClientTimeout` inside the app, which answers 408. A connection
that has sent nothing waits in the worker's poller, not in a thread. Whatever
gunicorn itself refuses (a bad request line, too many or too long headers) is
answered with problem details, like everything the app answers.
"""

from __future__ import annotations

import errno
import json
import os
import sys
import threading
import time

from gunicorn import util
from gunicorn.app.base import BaseApplication
from gunicorn.arbiter import Arbiter
from gunicorn.http import errors as http_errors
from gunicorn.http.unreader import SocketUnreader
from gunicorn.workers import gthread

from cohop.api import lifecycle
from cohop.api.body import ClientTimeout
from cohop.config import ConfigError, Settings, from_env

PROBLEM_JSON = "application/problem+json"

#: What gunicorn refuses, most specific first: (exception classes, status, title). A header the application
#: tried to send is the application's fault (500), whatever its class says.
GUNICORN_ERRORS = (
    ((http_errors.InvalidResponseHeader, http_errors.InvalidResponseHeaderName, http_errors.ConfigurationProblem),
     500, "Internal Server Error"),
    ((ClientTimeout,), 408, "Request Timeout"),
    ((http_errors.LimitRequestLine,), 414, "URI Too Long"),
    ((http_errors.LimitRequestHeaders,), 431, "Request Header Fields Too Large"),
    ((http_errors.ExpectationFailed,), 417, "Expectation Failed"),
    ((http_errors.UnsupportedTransferCoding,), 501, "Not Implemented"),
    ((http_errors.ForbiddenProxyRequest,), 403, "Forbidden"),
    ((http_errors.ParseException,), 400, "Bad Request"),
)


def classify(exc: BaseException) -> tuple[int, str]:
    """The status and title gunicorn's refusal of `exc` gets (500 for anything unexpected)."""
    for classes, status, title in GUNICORN_ERRORS:
        if isinstance(exc, classes):
            return status, title
    return 500, "Internal Server Error"


def problem_response(status: int, title: str, detail: str, instance: str = "") -> bytes:
    """A complete HTTP/1.1 answer carrying RFC 9457 problem details; the connection closes after it."""
    body = {"type": "about:blank", "title": title, "status": status}
    if detail:
        body["detail"] = detail
    body["instance"] = instance
    payload = json.dumps(body).encode()
    head = (f"HTTP/1.1 {status} {title}\r\nConnection: close\r\nContent-Type: {PROBLEM_JSON}\r\n"
            f"Content-Length: {len(payload)}\r\n\r\n")
    return head.encode("latin-1") + payload


class TimedUnreader(SocketUnreader):
    """gunicorn's socket reader with the client timeout.

    Phases: `headers` (the whole header block within `timeout_s` of its first
    read), `body` (each read within `timeout_s`), and `drain` (after the
    answer: gunicorn's own bounded drain sets its timeouts and handles them).
    A stalled read raises ClientTimeout, which is not an OSError, so that it
    is answered (408) rather than treated as a dead connection.
    """

    def __init__(self, sock, timeout_s: float):
        super().__init__(sock)
        self.timeout_s = timeout_s
        self.phase = "headers"
        self.deadline = None
        self.request = None

    def expect_headers(self):
        self.phase, self.deadline, self.request = "headers", None, None

    def expect_body(self, request):
        self.phase, self.request = "body", request

    def expect_drain(self):
        self.phase = "drain"

    def chunk(self, size_hint=None):
        if self.phase == "drain":
            return super().chunk(size_hint)
        self.sock.settimeout(self.timeout_s if self.phase == "body" else self._header_time_left())
        try:
            return super().chunk(size_hint)
        except TimeoutError:
            raise self._timed_out() from None

    def _header_time_left(self) -> float:
        now = time.monotonic()
        if self.deadline is None:
            self.deadline = now + self.timeout_s
        if now >= self.deadline:
            raise self._timed_out()
        return self.deadline - now

    def _timed_out(self) -> ClientTimeout:
        if self.phase == "headers":
            return ClientTimeout(f"the request headers did not arrive within {self.timeout_s:g} s "
                                 "(COHOP_CLIENT_TIMEOUT_S)")
        if self.request is not None:
            self.request.must_close = True  # the app's 408 then goes out with Connection: close
        return ClientTimeout(f"no data from the client for {self.timeout_s:g} s while reading the request body "
                             "(COHOP_CLIENT_TIMEOUT_S)")


class TimedConn(gthread.TConn):
    """A connection whose HTTP/1 reads go through TimedUnreader, and which never holds a thread while silent."""

    def __init__(self, cfg, sock, client, server, timeout_s: float):
        super().__init__(cfg, sock, client, server)
        self.timeout_s = timeout_s

    def wait_for_data(self, timeout):
        # gunicorn waits up to 5 s in a pool thread for a new connection's first bytes; here a silent connection
        # goes straight back to the poller (it is closed there after the keepalive timeout).
        return super().wait_for_data(0.0)

    def init(self):
        super().init()  # creates the parser on the first request; a no-op afterwards
        if self.is_http2 or self.parser is None:
            return
        reader = self.parser.unreader
        if type(reader) is SocketUnreader:
            timed = TimedUnreader(reader.sock, self.timeout_s)
            timed.buf = reader.buf
            self.parser.unreader = reader = timed
        if isinstance(reader, TimedUnreader):
            reader.expect_headers()  # called before every request on the connection


#: Answers after which the connection closes at once: the body was refused unread (413) or stopped arriving
#: (408), so it cannot carry another request, and draining what is left would only hold a thread.
CLOSE_AFTER = ("408", "413")


class CohopWorker(gthread.ThreadWorker):
    """gunicorn's threaded worker with the client timeout and problem-details refusals."""

    client_timeout_s: float | None = None

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        if self.client_timeout_s is None:
            self.client_timeout_s = from_env().client_timeout_s
        self._current = threading.local()  # the request each thread is answering

    def load_wsgi(self):
        super().load_wsgi()
        app, current = self.wsgi, self._current

        def closing_app(environ, start_response):
            def start(status, headers, exc_info=None):
                if status[:3] in CLOSE_AFTER and getattr(current, "request", None) is not None:
                    current.request.must_close = True  # gunicorn then answers with Connection: close
                return start_response(status, headers, exc_info)
            return app(environ, start)

        self.wsgi = closing_app

    def accept(self, listener):
        """gunicorn's accept, making a TimedConn."""
        try:
            client_sock, client_addr = listener.accept()
            self.nr_conns += 1
            client_sock.setblocking(True)
            conn = TimedConn(self.cfg, client_sock, client_addr, listener.getsockname(), self.client_timeout_s)
            self.enqueue_req(conn)
        except OSError as e:
            if e.errno not in (errno.EAGAIN, errno.ECONNABORTED, errno.EWOULDBLOCK):
                raise

    def handle_request(self, req, conn):
        reader = conn.parser.unreader
        timed = isinstance(reader, TimedUnreader)
        if timed:
            reader.expect_body(req)
        self._current.request = req
        try:
            return super().handle_request(req, conn)
        finally:
            self._current.request = None
            if timed:
                reader.expect_drain()

    def handle_error(self, req, client, addr, exc):
        """Answer what gunicorn refuses with problem details instead of its HTML page."""
        status, title = classify(exc)
        if status >= 500:
            self.log.exception("Error handling request %s", getattr(req, "uri", "(no URI read)"))
            detail = ""
        else:
            self.log.warning("Invalid request from ip=%s: %s", (addr or ("",))[0], exc)
            detail = _detail(exc)
        instance = getattr(req, "path", "") or ""
        try:
            util.write_nonblock(client, problem_response(status, title, detail, instance))
        except Exception:
            self.log.debug("Failed to send error message.")


def _detail(exc: BaseException) -> str:
    text = str(exc)
    return (text[:300] + "...") if len(text) > 300 else text


class DrainingArbiter(Arbiter):
    """gunicorn's arbiter whose SIGTERM first drains: readiness fails while serving goes on for `drain_s`."""

    drain_s = 0.0
    _drain_until: float | None = None

    def handle_term(self):
        lifecycle.mark_draining()
        if self._drain_until is not None or self.drain_s <= 0:
            raise StopIteration  # a second SIGTERM, or no drain: stop now (gracefully)
        self._drain_until = time.monotonic() + self.drain_s
        self.log.info("SIGTERM: /v1/ready answers 503; serving %g s more, then stopping gracefully", self.drain_s)

    def wait_for_signals(self, timeout=1.0):
        if self._drain_until is not None:
            left = self._drain_until - time.monotonic()
            if left <= 0:
                self.log.info("drain over: closing the listeners, finishing in-flight requests")
                raise StopIteration  # the main loop then stops gracefully, as on gunicorn's own SIGTERM
            timeout = min(timeout, left)
        return super().wait_for_signals(timeout)


class CohopServer(BaseApplication):
    """The gunicorn application: settings from `cohop.gunicorn_conf.options`, the app from the environment."""

    def __init__(self, settings: Settings):
        self.settings = settings
        super().__init__(usage="python -m cohop.server", prog="cohop")

    def load_config(self):
        from cohop.gunicorn_conf import options

        for key, value in options(self.settings).items():
            self.cfg.set(key, value)

    def load(self):
        from cohop.api.app import create_app_from_env
        from cohop.report import install

        return install(create_app_from_env())

    def run(self):
        CohopWorker.client_timeout_s = self.settings.client_timeout_s
        arbiter = DrainingArbiter(self)
        arbiter.drain_s = self.settings.drain_s
        arbiter.run()


def main(bind: str | None = None) -> int:
    """Serve until stopped; `bind` (host:port) overrides COHOP_BIND."""
    try:
        settings = from_env()
    except ConfigError as err:
        print(f"cohop: bad configuration: {err}", file=sys.stderr)
        return 2
    if bind is not None:
        from dataclasses import replace

        os.environ["COHOP_BIND"] = bind  # so that the app's start-up line shows it too
        settings = replace(settings, bind=bind)
    lifecycle.clear_draining()
    CohopServer(settings).run()
    return 0


if __name__ == "__main__":
    sys.exit(main())
