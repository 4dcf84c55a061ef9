"""The production server's pieces without a server: gunicorn's refusals as problem details, and the socket
reader's client timeout (on a local socket pair)."""

import json
import socket
import time

import pytest
from gunicorn.http import errors as http_errors

from cohop.api.body import ClientTimeout
from cohop.server import TimedUnreader, classify, problem_response


@pytest.mark.parametrize("exc, status", [
    (http_errors.InvalidRequestLine("GARBAGE"), 400),
    (http_errors.InvalidHeaderName("bad name"), 400),
    (http_errors.InvalidChunkSize(b"zz"), 400),
    (http_errors.LimitRequestLine(5000, 4094), 414),
    (http_errors.LimitRequestHeaders("limit request headers fields size"), 431),
    (http_errors.UnsupportedTransferCoding("gzip"), 501),
    (ClientTimeout("no data"), 408),
    (http_errors.InvalidResponseHeader("X-Bad"), 500),  # the application's header, not the client's fault
    (RuntimeError("unexpected"), 500),
])
def test_gunicorn_refusals_get_their_status(exc, status):
    assert classify(exc)[0] == status


def test_problem_response_is_a_complete_closing_answer():
    data = problem_response(431, "Request Header Fields Too Large", "limit request headers fields size", "/v1/plans")
    head, _, payload = data.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    headers = dict(line.split(": ", 1) for line in lines[1:])
    assert lines[0] == "HTTP/1.1 431 Request Header Fields Too Large"
    assert headers["Connection"] == "close" and headers["Content-Type"] == "application/problem+json"
    assert int(headers["Content-Length"]) == len(payload)
    assert json.loads(payload) == {"type": "about:blank", "title": "Request Header Fields Too Large", "status": 431,
                                   "detail": "limit request headers fields size", "instance": "/v1/plans"}


@pytest.fixture()
def pair():
    server, client = socket.socketpair()
    yield server, client
    server.close()
    client.close()


def test_headers_must_all_arrive_within_the_timeout(pair):
    server, client = pair
    reader = TimedUnreader(server, timeout_s=0.2)
    client.sendall(b"GET / HTTP/1.1\r\n")
    assert reader.chunk() == b"GET / HTTP/1.1\r\n"
    time.sleep(0.25)  # past the header deadline, although more bytes are waiting
    client.sendall(b"Host: x\r\n")
    with pytest.raises(ClientTimeout, match="headers did not arrive"):
        reader.chunk()


def test_a_stalled_header_or_body_read_raises_client_timeout(pair):
    server, client = pair
    reader = TimedUnreader(server, timeout_s=0.05)
    with pytest.raises(ClientTimeout, match="headers"):
        reader.chunk()

    class Request:
        must_close = False

    request = Request()
    reader.expect_body(request)
    client.sendall(b"{")
    assert reader.chunk() == b"{"  # each body read gets the whole timeout again
    with pytest.raises(ClientTimeout, match="body"):
        reader.chunk()
    assert request.must_close  # the app's 408 goes out with Connection: close


def test_after_the_answer_gunicorn_handles_the_drain(pair):
    server, _ = pair
    reader = TimedUnreader(server, timeout_s=0.05)
    reader.expect_drain()
    server.settimeout(0.05)  # gunicorn's drain sets its own deadline and catches the plain timeout
    with pytest.raises(TimeoutError) as err:
        reader.chunk()
    assert not isinstance(err.value, ClientTimeout)
