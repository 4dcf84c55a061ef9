"""The real server against slow clients, oversized and malformed requests: health and evaluations still
answered, every refusal problem details (from the app or from gunicorn itself)."""

import json
import socket
import threading

import pytest
import requests

from cohop import samples
from tests.production.procs import Server, read_answer, send_raw

pytestmark = pytest.mark.server

CAP = 64 * 1024
CLIENT_TIMEOUT_S = 2
PROBLEM_JSON = "application/problem+json"


@pytest.fixture(scope="module")
def server():
    # Fewer threads than slow clients: only the client timeout can free them for health and evaluations.
    # No solve here, so no solver fork server to start.
    with Server(COHOP_THREADS=4, COHOP_CLIENT_TIMEOUT_S=CLIENT_TIMEOUT_S, COHOP_MAX_BODY_BYTES=CAP,
                COHOP_ISOLATE_SOLVES="false") as s:
        yield s


def _head(path: str, extra: str = "") -> bytes:
    return f"POST {path} HTTP/1.1\r\nHost: cohop\r\nContent-Type: application/json\r\n{extra}".encode()


SLOW_STARTS = [
    _head("/v1/assessments"),  # headers never finished
    _head("/v1/plans", "Authorization: Bearer "),
    b"GET /v1/health HTTP/1.1\r\nHo",
    _head("/v1/assessments", "Content-Length: 5000\r\n\r\n") + b'{"site": {"profile": ',  # body never finished
    _head("/v1/plans", "Content-Length: 900\r\n\r\n") + b"{",
    _head("/v1/assessments", "Transfer-Encoding: chunked\r\n\r\n") + b'9\r\n{"site": ',
]


def _hold(url: str, start: bytes, answers: list, index: int):
    host, port = url.removeprefix("http://").split(":")
    with socket.create_connection((host, int(port)), timeout=60) as sock:
        sock.sendall(start)
        answers[index] = read_answer(sock)  # nothing more is sent: the server must end this itself


def _check_problem(answer, status: int) -> dict:
    assert answer is not None and answer.status == status, answer and (answer.status, answer.body[:300])
    assert answer.headers["content-type"] == PROBLEM_JSON
    body = answer.json()
    assert body["status"] == status and body["title"] and "type" in body
    return body


def test_slow_clients_do_not_starve_health_or_evaluations_and_get_408(server):
    answers = [None] * len(SLOW_STARTS)
    holders = [threading.Thread(target=_hold, args=(server.url, start, answers, i))
               for i, start in enumerate(SLOW_STARTS)]
    for t in holders:
        t.start()
    # More slow clients than threads hold on; health and a small assessment must still be answered.
    assert requests.get(server.url + "/v1/health", timeout=60).json()["status"] == "ok"
    assessed = requests.post(server.url + "/v1/assessments", json=samples.load("open_pit_mine"), timeout=60)
    assert assessed.status_code == 200 and assessed.json()["systems"]
    for t in holders:
        t.join(60)
    for start, answer in zip(SLOW_STARTS, answers):
        body = _check_problem(answer, 408)
        assert answer.headers["connection"] == "close"
        assert "COHOP_CLIENT_TIMEOUT_S" in body["detail"]
        if b"\r\n\r\n" not in start:  # from gunicorn (headers), else from the app (body)
            assert f"headers did not arrive within {CLIENT_TIMEOUT_S} s" in body["detail"]


def _chunked_request(payload: bytes, piece: int = 8192) -> bytes:
    chunks = b"".join(b"%x\r\n%s\r\n" % (len(payload[i:i + piece]), payload[i:i + piece])
                      for i in range(0, len(payload), piece))
    return _head("/v1/assessments", "Transfer-Encoding: chunked\r\nConnection: close\r\n\r\n") + chunks + b"0\r\n\r\n"


def _padded_sample(size: int) -> bytes:
    raw = json.dumps(samples.load("water_works")).encode()
    return raw + b" " * (size - len(raw))


def test_chunked_body_over_the_cap_is_413_and_at_the_cap_is_served(server):
    over = send_raw(server.url, _chunked_request(_padded_sample(CAP + 1)))
    assert str(CAP) in _check_problem(over, 413)["detail"]
    at = send_raw(server.url, _chunked_request(_padded_sample(CAP)))
    assert at.status == 200 and at.headers["content-type"] == "application/json"
    # Announced over the cap: refused before any of it is sent (so the server cannot be waiting for it).
    _check_problem(send_raw(server.url, _head("/v1/assessments", f"Content-Length: {CAP + 1}\r\n\r\n")), 413)


@pytest.mark.parametrize("request_bytes, status", [
    (b"GET /v1/health HTTP/1.1\r\nHost: cohop\r\nX-Padding: " + b"a" * 10_000 + b"\r\n\r\n", 431),
    (b"GET /v1/health HTTP/1.1\r\nHost: cohop\r\n" + b"".join(b"X-F%d: 1\r\n" % i for i in range(120)) + b"\r\n", 431),
    (b"GARBAGE\r\n\r\n", 400),
    (b"GET /v1/health HTTP/9.9\r\nHost: cohop\r\n\r\n", 400),
    (b"GET /v1/health HTTP/1.1\r\nBad Header Name: x\r\n\r\n", 400),
    (b"GET /" + b"a" * 5000 + b" HTTP/1.1\r\nHost: cohop\r\n\r\n", 414),
    (_head("/v1/assessments", "Transfer-Encoding: chunked\r\n\r\n") + b"zz\r\n{}\r\n0\r\n\r\n", 400),
])
def test_what_gunicorn_refuses_is_problem_details(server, request_bytes, status):
    _check_problem(send_raw(server.url, request_bytes), status)
    assert requests.get(server.url + "/v1/health", timeout=60).status_code == 200


def test_openapi_document_on_the_real_server(server):
    spec = requests.get(server.url + "/openapi.json", timeout=60).json()
    assert spec["components"]["securitySchemes"]["bearerAuth"]["scheme"] == "bearer"
    assert spec["paths"]["/v1/plans"]["post"]["security"] == [{"bearerAuth": []}]
    assert spec["paths"]["/v1/health"]["get"]["security"] == []
    assert "text/plain" in spec["paths"]["/metrics"]["get"]["responses"]["200"]["content"]
