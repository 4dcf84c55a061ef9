"""The hostile corpus against the real gunicorn server (`cohop serve`), over real sockets.

Chunked bodies and slow clients run here only. After every case the server must still answer
/v1/health. Each case's time is recorded (`record_property`), never asserted; bench/hostile.py prints
them with the maximum.
"""

from __future__ import annotations

import pytest
import requests

from tests.hostile import verdict
from tests.hostile.corpus import Case
from tests.hostile.test_corpus_app import params
from tests.hostile.serving import drained_server

pytestmark = pytest.mark.server


@pytest.fixture(scope="module")
def server():
    with drained_server(COHOP_MAX_SOLVE_S=2) as s:
        yield s


@pytest.mark.parametrize("case", params("server"))
def test_case_answers_4xx_problem_or_strict_json(server, case: Case, record_property):
    out = verdict.over_http("127.0.0.1", server.port, case)
    record_property("seconds", round(out.seconds, 3))
    try:
        verdict.judge(case, out)
    finally:
        assert server.proc.poll() is None, "the server exited"
        assert requests.get(server.url + "/v1/health", timeout=10).status_code == 200
