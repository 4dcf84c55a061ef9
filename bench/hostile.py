"""The hostile-request corpus (tests/hostile/corpus.py) against the real server: time per case.

Starts `cohop serve` (gunicorn, one worker, COHOP_MAX_SOLVE_S=2) on loopback, sends every case the
server runner sends, one at a time, and prints each case's status, verdict and wall time from the first
byte sent to the last byte received (loopback: that is the server's work, plus sending the body). Then
the maximum, the cases over the issue's 2 s, and whether /v1/health still answers.

    python bench/hostile.py [--repeat 3] [--only NAME ...]

With --repeat the median of the repeats is printed (the first solve also starts the solver fork server).
"""

from __future__ import annotations

import argparse
import statistics

import _common  # noqa: F401
from _common import machine

import requests

from tests.hostile import verdict
from tests.hostile.corpus import CASES
from tests.hostile.serving import drained_server

TARGET_S = 2.0


def _verdict(case, out) -> str:
    try:
        verdict.judge(case, out)
        return "ok"
    except AssertionError as err:
        owner = case.owners.get("server")
        return ("xfail: " + owner) if owner else ("FAIL: " + str(err).splitlines()[0][:100])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=1)
    ap.add_argument("--only", nargs="*")
    args = ap.parse_args()
    cases = [c for c in CASES if "server" in c.where and c.run and (not args.only or c.name in args.only)]
    print(f"hostile corpus on the real server: {len(cases)} cases, {machine()}", flush=True)
    rows = []
    with drained_server(COHOP_MAX_SOLVE_S=2) as server:
        for case in cases:
            outs = [verdict.over_http("127.0.0.1", server.port, case) for _ in range(args.repeat)]
            seconds = statistics.median(o.seconds for o in outs)
            rows.append((case.name, outs[-1].status, seconds, _verdict(case, outs[-1])))
            print(f"{case.name:42s} {outs[-1].status:4d} {seconds:7.3f} s  {rows[-1][3]}", flush=True)
        healthy = requests.get(server.url + "/v1/health", timeout=10).status_code == 200
    worst = max(rows, key=lambda r: r[2])
    slow = [r for r in rows if r[2] > TARGET_S]
    print(f"\nmax {worst[2]:.3f} s ({worst[0]}); over {TARGET_S} s: "
          + (", ".join(f"{r[0]} {r[2]:.2f} s" for r in slow) or "none"))
    print(f"5xx answers: {sum(1 for r in rows if r[1] >= 500)}; failures: "
          f"{sum(1 for r in rows if r[3].startswith('FAIL'))}; health after: {'ok' if healthy else 'NO ANSWER'}")


if __name__ == "__main__":
    main()
