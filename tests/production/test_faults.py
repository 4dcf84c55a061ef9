"""Fault tests on the real thing: a killed, failing, runaway or abandoned solver, SIGTERM during a solve,
client retries on 503."""

import copy
import json
import logging
import os
import re
import signal
import socket
import threading
import time

import pytest
import requests

from cohop import samples
from cohop.api import create_app
from cohop.errors import SolverCrashed
from cohop.isolation import ClientWatch, run_isolated
from cohop_client import Client, ServerError, TransportError
from tests.production.procs import Server, solver_processes, wait_for


def _plan_body(seconds: float) -> dict:
    body = copy.deepcopy(samples.load("water_works"))
    body["search"] = {"time_limit_s": seconds, "sequence_packets": 1000}
    return body


def _a_bug() -> None:
    raise ValueError("a bug in the solver")


def test_an_unexpected_error_in_the_solver_process_is_solver_crashed_with_its_cause_logged(caplog):
    with caplog.at_level(logging.ERROR, logger="cohop.solver"):
        with pytest.raises(SolverCrashed):
            run_isolated(_a_bug, kill_at=time.monotonic() + 60)
    assert "ValueError: a bug in the solver" in caplog.text  # the traceback, for the operator


def test_a_runaway_solver_is_killed_at_its_hard_cap():
    with pytest.raises(SolverCrashed):
        run_isolated(time.sleep, 120, kill_at=time.monotonic() + 1.0)
    assert solver_processes(os.getpid()) == []


def test_the_client_watch_tells_an_open_connection_from_a_closed_one():
    ours, theirs = socket.socketpair()
    with ours:
        watch = ClientWatch(ours)
        assert not watch.gone()  # connected, nothing sent
        theirs.sendall(b"GET / HTTP/1.1\r\n")  # a pipelined request: still there
        assert not watch.gone()
        assert ours.recv(64)
        theirs.close()
        assert watch.gone()


def _announces_a_late_end() -> str:
    from cohop.deadline import Deadline

    Deadline.of(1.0, 1.0).expect(time.monotonic() + 20.0)  # a site whose closing phases outlast its limit
    time.sleep(3.0)
    return "answered"


def test_a_solve_that_announces_a_later_end_is_not_killed_before_it():
    assert run_isolated(_announces_a_late_end, kill_at=time.monotonic() + 2.0, grace_s=1.0) == "answered"


def test_a_killed_solver_fails_the_request_cleanly_in_process():
    import os

    app = create_app({"TESTING": True, "COHOP_ISOLATE_SOLVES": True})
    client = app.test_client()
    answers = []
    thread = threading.Thread(target=lambda: answers.append(client.post("/v1/plans", json=_plan_body(8))))
    thread.start()
    victims = wait_for(lambda: solver_processes(os.getpid()), 30)
    assert victims, "no solver process appeared"
    for pid in victims:
        os.kill(pid, signal.SIGKILL)
    thread.join(60)
    resp = answers[0]
    assert resp.status_code == 500
    assert resp.json["type"] == "urn:cohop:problem:solver-failed"
    assert client.post("/v1/plans", json=_plan_body(0.3)).status_code == 200  # the next one is served


@pytest.fixture(scope="module")
def server():
    with Server(COHOP_RETRY_AFTER_S=1) as s:
        yield s


def test_a_killed_solver_on_the_real_server(server):
    import os

    answers = []
    thread = threading.Thread(target=lambda: answers.append(requests.post(server.url + "/v1/plans",
                                                                          json=_plan_body(8), timeout=60)))
    thread.start()
    victims = wait_for(lambda: solver_processes(server.proc.pid), 30)
    assert victims
    for pid in victims:
        os.kill(pid, signal.SIGKILL)
    thread.join(60)
    assert answers[0].status_code == 500 and answers[0].headers["Content-Type"] == "application/problem+json"
    assert requests.post(server.url + "/v1/plans", json=_plan_body(0.3), timeout=60).status_code == 200


def test_client_retries_503_honouring_retry_after(server):
    """The slot is held by a running solve: the first attempt gets 503 and the client waits Retry-After.
    Its wait is replaced by waiting for the running solve to end, so the retry finds the slot free
    whatever the machine's speed."""
    long = threading.Thread(target=lambda: requests.post(server.url + "/v1/plans", json=_plan_body(3), timeout=60))
    long.start()
    assert wait_for(lambda: solver_processes(server.proc.pid), 30)
    waits = []
    with Client(server.url, retries=0) as impatient:
        with pytest.raises(ServerError) as err:
            impatient.plan(_plan_body(0.3)["site"], search={"time_limit_s": 0.3})
        assert err.value.status == 503
    with Client(server.url, retries=3, max_wait_s=5) as api:
        api._sleep = lambda s: (waits.append(s), long.join(60))
        result = api.plan(_plan_body(0.3)["site"], search={"time_limit_s": 0.3, "sequence_packets": 1000})
    assert result.solver.status in ("optimal", "feasible")
    assert waits == [1.0]  # one retry, after the server's Retry-After, not the backoff


def _abandoned_solves(url: str) -> float:
    text = requests.get(url + "/metrics", timeout=10).text
    found = re.search(r'cohop_solve_duration_seconds_count\{kind="plan",status="abandoned"\} (\S+)', text)
    return float(found.group(1)) if found else 0.0


@pytest.mark.server
def test_an_abandoned_plan_stops_its_solver_and_frees_the_slot(server):
    """A client that gives up (closes its connection) stops its solve: the solver process goes, the solve
    counts as abandoned, and the next plan is served."""
    before = _abandoned_solves(server.url)
    payload = json.dumps(_plan_body(60)).encode()  # clamped to the server's cap of 10 s: a long solve
    head = (f"POST /v1/plans HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
            f"Content-Length: {len(payload)}\r\n\r\n").encode()
    with socket.create_connection(("127.0.0.1", server.port), timeout=30) as sock:
        sock.sendall(head + payload)
        victims = wait_for(lambda: solver_processes(server.proc.pid), 30)
        assert victims
    # the client has gone: its solve must be stopped, not run to its limit
    assert wait_for(lambda: _abandoned_solves(server.url) == before + 1, 30)
    assert wait_for(lambda: not set(victims) & set(solver_processes(server.proc.pid)), 30)
    answer = requests.post(server.url + "/v1/plans", json=_plan_body(0.3), timeout=60)
    assert answer.status_code == 200


def test_connection_errors_back_off_and_give_up():
    waits = []
    api = Client("http://127.0.0.1:9", retries=2, backoff_s=0.01)
    api._sleep = waits.append
    with pytest.raises(TransportError, match="could not reach"):
        api.health()
    assert len(waits) == 2 and all(0.0 <= w <= 30.0 for w in waits)  # urllib3's backoff, capped at max_wait_s
    assert waits[1] >= 0.01  # the second wait backs off


def _env_blas() -> str | None:
    import os

    return os.environ.get("OPENBLAS_NUM_THREADS")


def test_solver_processes_use_one_blas_thread():
    # cohop.isolation.BLAS_THREADS: set before the fork server starts, so every solve's numpy has one BLAS thread
    # (an operator's own OPENBLAS_NUM_THREADS would be kept instead).
    import os

    want = os.environ.get("OPENBLAS_NUM_THREADS", "1")
    assert run_isolated(_env_blas, kill_at=time.monotonic() + 60) == want
