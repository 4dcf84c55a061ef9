"""The real server's shutdown: from SIGTERM, readiness answers 503 while serving goes on for COHOP_DRAIN_S;
then in-flight requests (a solve) finish and the process exits cleanly."""

import copy
import signal
import threading

import pytest
import requests

from cohop import samples
from tests.production.procs import Server, solver_processes, wait_for

pytestmark = pytest.mark.server


def _ready_status(url: str) -> int | None:
    try:
        return requests.get(url + "/v1/ready", timeout=10).status_code
    except requests.RequestException:
        return None


def test_sigterm_drains_then_finishes_the_solve_in_flight_then_exits():
    plan = copy.deepcopy(samples.load("water_works"))
    plan["search"] = {"time_limit_s": 2, "sequence_packets": 1000}
    with Server(COHOP_DRAIN_S=3) as s:
        answers = []
        solving = threading.Thread(target=lambda: answers.append(
            requests.post(s.url + "/v1/plans", json=plan, timeout=120)))
        solving.start()
        assert wait_for(lambda: solver_processes(s.proc.pid), 30), "no solve in flight"
        assert _ready_status(s.url) == 200

        s.proc.send_signal(signal.SIGTERM)
        assert wait_for(lambda: _ready_status(s.url) == 503, 10), "readiness did not fail after SIGTERM"
        ready = requests.get(s.url + "/v1/ready", timeout=10)
        body = ready.json()
        assert ready.headers["Content-Type"] == "application/problem+json"
        assert body["status"] == 503 and body["state"] == "draining" and body["type"] == "urn:cohop:problem:draining"
        # Sent during the drain (the listener is still open): answered in full.
        assessed = requests.post(s.url + "/v1/assessments", json=samples.load("open_pit_mine"), timeout=60)
        assert assessed.status_code == 200 and assessed.json()["systems"]

        solving.join(120)
        assert answers and answers[0].status_code == 200, answers and answers[0].text[:300]
        assert answers[0].json()["plan"]
        assert s.proc.wait(60) == 0  # then the server exits by itself, cleanly
    with pytest.raises(requests.ConnectionError):
        requests.get(s.url + "/v1/health", timeout=5)
