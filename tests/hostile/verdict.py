"""Send a corpus case (in-process or over a socket) and judge the answer.

An answer passes when it is not 5xx, its status is one the case allows, and it is either a 4xx
application/problem+json body of the documented shape (with the expected pointer, if the case names
one) or a 2xx whose body is strict JSON (empty for HEAD and OPTIONS; Prometheus text for /metrics).
"""

from __future__ import annotations

import http.client
import socket
import time
from dataclasses import dataclass

from cohop import limits
from cohop.api.schemas.plan import InfeasibleProblemSchema
from tests.hostile.corpus import Case
from tests.hostile.strict import strict_loads

PROBLEM_KEYS = frozenset(InfeasibleProblemSchema().fields)
CHUNK = 64 * 1024


@dataclass(frozen=True)
class Outcome:
    status: int  # 0: no answer (the connection failed)
    content_type: str
    body: bytes
    seconds: float
    error: str = ""


def judge(case: Case, out: Outcome) -> None:
    """Raise AssertionError with the reason if the answer is wrong."""
    assert out.status, f"no answer: {out.error}"
    assert out.status < 500, f"{out.status}: {out.body[:2000]!r}"
    assert out.status in case.statuses, f"{out.status} not in {case.statuses}: {out.body[:2000]!r}"
    if out.status >= 400:
        _problem(case, out)
    elif case.method in ("HEAD", "OPTIONS"):
        assert out.body == b""
    elif case.path == "/metrics":
        assert out.content_type.startswith("text/plain")
    else:
        assert out.content_type.split(";")[0].strip() == "application/json", out.content_type
        strict_loads(out.body)


def _problem(case: Case, out: Outcome) -> None:
    assert out.content_type.split(";")[0].strip() == "application/problem+json", (out.content_type, out.body[:500])
    body = strict_loads(out.body)
    assert set(body) <= PROBLEM_KEYS, set(body) - PROBLEM_KEYS
    assert body["status"] == out.status and isinstance(body["title"], str) and body["title"]
    assert isinstance(body["type"], str) and isinstance(body["instance"], str)
    errors = body.get("errors", [])
    assert len(errors) <= limits.MAX_FIELD_ERRORS
    assert all(set(e) == {"pointer", "detail"} and isinstance(e["pointer"], str) and e["detail"] for e in errors)
    if case.pointer is not None:
        assert case.pointer in [e["pointer"] for e in errors], body


def in_process(client, case: Case) -> Outcome:
    """The case through Flask's test client (no socket: chunking and slow clients do not apply)."""
    kwargs = {"method": case.method, "headers": dict(case.headers)}
    payload = case.payload()
    if payload is not None:
        kwargs["data"] = payload
    if case.content_type is not None:
        kwargs["content_type"] = case.content_type
    start = time.perf_counter()
    resp = client.open(case.path, **kwargs)
    body = resp.get_data()
    return Outcome(resp.status_code, resp.headers.get("Content-Type", ""), body, time.perf_counter() - start)


def over_http(host: str, port: int, case: Case, timeout_s: float = 120.0) -> Outcome:
    """The case over a real socket; its slow clients (if any) hold partial bodies open meanwhile."""
    payload = case.payload()
    held = [_slow_client(host, port) for _ in range(case.slow_clients)]
    if held:
        time.sleep(0.5)  # let the server take them up before the case's own request
    try:
        return _send(host, port, case, payload, timeout_s if not held else 10.0)
    finally:
        for s in held:
            s.close()


def _send(host, port, case: Case, payload: bytes | None, timeout_s: float) -> Outcome:
    conn = http.client.HTTPConnection(host, port, timeout=timeout_s)
    headers = dict(case.headers)
    if case.content_type is not None:
        headers["Content-Type"] = case.content_type
    body = payload
    if case.chunked and payload is not None:
        headers["Transfer-Encoding"] = "chunked"
        body = (payload[i:i + CHUNK] for i in range(0, len(payload), CHUNK))
    start = time.perf_counter()
    try:
        try:
            conn.request(case.method, case.path, body=body, headers=headers, encode_chunked=case.chunked)
        except (BrokenPipeError, ConnectionResetError):
            pass  # the server may answer (413) before reading the whole body
        resp = conn.getresponse()
        data = resp.read()
        return Outcome(resp.status, resp.getheader("Content-Type") or "", data, time.perf_counter() - start)
    except (OSError, http.client.HTTPException) as err:
        return Outcome(0, "", b"", time.perf_counter() - start, f"{type(err).__name__}: {err}")
    finally:
        conn.close()


def _slow_client(host: str, port: int) -> socket.socket:
    """A client that announces a 100 kB body, sends one byte of it, and holds the connection."""
    s = socket.create_connection((host, port), timeout=5)
    s.sendall(b"POST /v1/assessments HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"
              b"Content-Length: 100000\r\n\r\n{")
    return s
