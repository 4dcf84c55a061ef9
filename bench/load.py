"""Load test: the real server (gunicorn) on loopback, driven from a second process for a bounded time.

Phase 1, evaluations: small assessments (the small generated site, detail "system") from several client
threads. Phase 2, a flood of plans beside evaluations and bad requests: plans beyond the solve slots must
get 503 with Retry-After and nothing else 5xx, evaluations keep flowing. The server's memory (all its
processes) is sampled throughout. Prints throughput, p50/p99 latency and answers by status; stops by itself.

    python bench/load.py [--seconds 20]

Targets (issue "Production service"): at least 200 small evaluations per second with no 5xx; under a flood
of plans, 503s with Retry-After and no 5xx of any other kind, memory flat over the run.
"""

from __future__ import annotations

import argparse
import copy
import json
import multiprocessing
import statistics
import threading
import time
from collections import Counter

import _common  # noqa: F401
from _common import machine

import requests

from bench import sitegen
from tests.production.procs import Server, descendants


def _memory_mib(pid: int) -> float:
    """Proportional set size of the server and all its processes (shared pages counted once)."""
    total = 0
    for p in [pid, *descendants(pid)]:
        try:
            with open(f"/proc/{p}/smaps_rollup") as fh:
                for line in fh:
                    if line.startswith("Pss:"):
                        total += int(line.split()[1]) * 1024
        except OSError:
            pass
    return total / 2**20


def _worker(url: str, kind: str, stop_at: float, bodies: dict, out) -> None:
    session = requests.Session()
    stats = []
    while time.monotonic() < stop_at:
        t = time.perf_counter()
        try:
            if kind == "assess":
                r = session.post(url + "/v1/assessments", json=bodies["assess"], timeout=30)
            elif kind == "plan":
                r = session.post(url + "/v1/plans", json=bodies["plan"], timeout=120)
            else:
                r = session.post(url + "/v1/assessments", data=b'{"site": {"systems": []}}',
                                 headers={"Content-Type": "application/json"}, timeout=30)
            stats.append((kind, r.status_code, "Retry-After" in r.headers, time.perf_counter() - t))
        except requests.RequestException as err:
            stats.append((kind, type(err).__name__, False, time.perf_counter() - t))
    out.put(stats)


def _drive(url: str, mix: dict[str, int], seconds: float, bodies: dict) -> list:
    """In this (second) process: threads per kind for `seconds`."""
    q: "multiprocessing.Queue" = multiprocessing.Queue()
    stop_at = time.monotonic() + seconds
    threads = [threading.Thread(target=_worker, args=(url, kind, stop_at, bodies, q))
               for kind, n in mix.items() for _ in range(n)]
    for t in threads:
        t.start()
    results = []
    for _ in threads:
        results += q.get()
    for t in threads:
        t.join()
    return results


def _child(url, mix, seconds, bodies, conn):
    conn.send(_drive(url, mix, seconds, bodies))
    conn.close()


def run_phase(server: Server, name: str, mix: dict[str, int], seconds: float, bodies: dict) -> None:
    receiver, sender = multiprocessing.Pipe(duplex=False)
    proc = multiprocessing.get_context("spawn").Process(target=_child, args=(server.url, mix, seconds, bodies, sender))
    memory = [_memory_mib(server.proc.pid)]
    proc.start()
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        time.sleep(1.0)
        memory.append(_memory_mib(server.proc.pid))
    results = receiver.recv()
    proc.join()
    time.sleep(3.0)  # let the last solves end
    memory.append(_memory_mib(server.proc.pid))
    print(f"\n{name} ({seconds:g} s, client threads {mix}):")
    for kind in mix:
        rows = [r for r in results if r[0] == kind]
        if not rows:
            continue
        ok = [r[3] for r in rows if r[1] in (200, 422)]
        lat = sorted(r[3] for r in rows)
        p50 = statistics.median(lat) * 1e3
        p99 = lat[min(len(lat) - 1, int(0.99 * len(lat)))] * 1e3
        by_status = Counter(r[1] for r in rows)
        retry_after = sum(1 for r in rows if r[1] == 503 and r[2])
        other_5xx = sum(n for s, n in by_status.items() if isinstance(s, int) and s >= 500 and s != 503)
        print(f"  {kind:7s}: {len(rows) / seconds:7.1f} requests/s ({len(ok) / seconds:.1f}/s answered 200/422), "
              f"p50 {p50:.1f} ms, p99 {p99:.1f} ms; by status {dict(by_status)}; 503 with Retry-After "
              f"{retry_after}; other 5xx {other_5xx}")
    print(f"  server memory (PSS of all its processes): start {memory[0]:.0f} MiB, 3 s after the end "
          f"{memory[-1]:.0f} MiB, max during {max(memory):.0f} MiB")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--seconds", type=float, default=20.0)
    args = parser.parse_args()
    print(f"machine: {machine()}")
    small = sitegen.generate("small", seed=1)
    plan = copy.deepcopy(small)
    for s in plan["systems"]:
        s.pop("hop_set")
    bodies = {"assess": {"site": small, "detail": "system"},
              "plan": {"site": plan, "requirements": {"systems": [{"system": s["id"], "min_channels": 20,
                                                                   "max_channels": 20} for s in plan["systems"]]},
                       "search": {"time_limit_s": 1.0, "sequence_packets": 1000}}}
    print(f"request sizes: assessment {len(json.dumps(bodies['assess']))} bytes, plan {len(json.dumps(bodies['plan']))}")
    with Server(COHOP_WORKERS="2", COHOP_SOLVER_THREADS="1", COHOP_THREADS="4", COHOP_RETRY_AFTER_S="1",
                COHOP_LOG_LEVEL="WARNING") as server:
        run_phase(server, "phase 1: small evaluations", {"assess": 8}, args.seconds, bodies)
        run_phase(server, "phase 2: a flood of plans beside evaluations and bad requests",
                  {"plan": 8, "assess": 4, "bad": 1}, args.seconds, bodies)


if __name__ == "__main__":
    main()
