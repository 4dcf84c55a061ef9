"""Fixtures for the client and command-line tests: a real HTTP server and small stub servers."""

from __future__ import annotations

import copy
import json
import socket
import threading
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest
from werkzeug.serving import make_server

from cohop import samples
from cohop.api import create_app

HOST = "127.0.0.1"


@pytest.fixture(scope="session")
def live_server():
    """The real app served over HTTP on a free port; yields its base URL."""
    server = make_server(HOST, 0, create_app(), threaded=True)
    thread = threading.Thread(target=server.serve_forever, name="cohop-live-server", daemon=True)
    thread.start()
    try:
        yield f"http://{HOST}:{server.server_port}"
    finally:
        server.shutdown()
        server.server_close()
        thread.join(timeout=10)


@pytest.fixture
def sample_site() -> dict:
    """A fresh copy of the default sample's site (tests may mutate it)."""
    return copy.deepcopy(samples.load("water_works")["site"])


@pytest.fixture
def free_port() -> int:
    """A port on 127.0.0.1 with nothing listening on it."""
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


class StubServer:
    """A tiny HTTP server whose answers come from `responder(method, path, headers, body)`.

    The responder returns (status, content_type, body) where body is bytes, str or
    a JSON-serialisable object. Every request seen is recorded in `requests`.
    """

    def __init__(self, responder):
        self.responder = responder
        self.requests: list[dict] = []
        stub = self

        class Handler(BaseHTTPRequestHandler):
            def _answer(self):
                length = int(self.headers.get("Content-Length") or 0)
                body = self.rfile.read(length) if length else b""
                stub.requests.append({"method": self.command, "path": self.path,
                                      "headers": dict(self.headers), "body": body})
                status, ctype, payload = stub.responder(self.command, self.path, self.headers, body)
                if not isinstance(payload, (bytes, str)):
                    payload = json.dumps(payload)
                if isinstance(payload, str):
                    payload = payload.encode("utf-8")
                self.send_response(status)
                self.send_header("Content-Type", ctype)
                self.send_header("Content-Length", str(len(payload)))
                self.end_headers()
                self.wfile.write(payload)

            do_GET = do_POST = _answer

            def log_message(self, *args):
                pass

        self._server = ThreadingHTTPServer((HOST, 0), Handler)
        self._server.daemon_threads = True
        self.url = f"http://{HOST}:{self._server.server_port}"
        self._thread = threading.Thread(target=self._server.serve_forever, name="cohop-stub", daemon=True)
        self._thread.start()

    def close(self):
        self._server.shutdown()
        self._server.server_close()
        self._thread.join(timeout=10)


@pytest.fixture
def stub_server():
    """Factory: stub_server(responder) -> a started StubServer, closed after the test."""
    started: list[StubServer] = []

    def start(responder) -> StubServer:
        stub = StubServer(responder)
        started.append(stub)
        return stub

    yield start
    for stub in started:
        stub.close()


class SilentServer:
    """Accepts TCP connections, optionally sends `greeting` bytes, then never says more."""

    def __init__(self, greeting: bytes = b""):
        self.greeting = greeting
        self._sock = socket.create_server((HOST, 0))
        self._sock.settimeout(0.2)
        self._conns: list[socket.socket] = []
        self._stop = threading.Event()
        self.url = f"http://{HOST}:{self._sock.getsockname()[1]}"
        self._thread = threading.Thread(target=self._run, name="cohop-silent", daemon=True)
        self._thread.start()

    def _run(self):
        while not self._stop.is_set():
            try:
                conn, _ = self._sock.accept()
            except (TimeoutError, socket.timeout):
                continue
            except OSError:
                return
            self._conns.append(conn)
            if self.greeting:
                conn.settimeout(2)
                try:
                    conn.recv(65536)
                    conn.sendall(self.greeting)
                except OSError:
                    pass

    def close(self):
        self._stop.set()
        self._thread.join(timeout=5)
        for conn in self._conns:
            conn.close()
        self._sock.close()


@pytest.fixture
def silent_server():
    """Factory: silent_server(greeting=b"") -> a started SilentServer, closed after the test."""
    started: list[SilentServer] = []

    def start(greeting: bytes = b"") -> SilentServer:
        srv = SilentServer(greeting)
        started.append(srv)
        return srv

    yield start
    for srv in started:
        srv.close()
