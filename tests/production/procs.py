"""Finding solver processes and running the real server, for fault tests."""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
from pathlib import Path

import requests


def _stat(pid: int) -> tuple[int, str] | None:
    try:
        text = Path(f"/proc/{pid}/stat").read_text()
        cmd = Path(f"/proc/{pid}/cmdline").read_bytes().replace(b"\0", b" ").decode(errors="replace")
    except OSError:
        return None
    ppid = int(text[text.rindex(")") + 2:].split()[1])
    return ppid, cmd


def descendants(root: int) -> dict[int, str]:
    table = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            st = _stat(int(entry))
            if st:
                table[int(entry)] = st
    out, frontier = {}, [root]
    while frontier:
        parent = frontier.pop()
        for pid, (ppid, cmd) in table.items():
            if ppid == parent and pid not in out:
                out[pid] = cmd
                frontier.append(pid)
    return out


def solver_processes(root: int) -> list[int]:
    """Children of a multiprocessing fork server below `root` (each runs one solve)."""
    procs = descendants(root)
    servers = {pid for pid, cmd in procs.items() if "forkserver" in cmd}
    out = []
    for pid in procs:
        st = _stat(pid)
        if st is not None and st[0] in servers:
            out.append(pid)
    return out


def wait_for(predicate, timeout_s: float = 20.0, step_s: float = 0.05):
    end = time.monotonic() + timeout_s
    while time.monotonic() < end:
        value = predicate()
        if value:
            return value
        time.sleep(step_s)
    return None


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Server:
    """The real server (`cohop serve`: cohop.server's gunicorn application) on loopback.

    COHOP_DRAIN_S is 0 unless given, so that stopping a test server does not wait for a drain."""

    def __init__(self, **env):
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        full = {**os.environ, "COHOP_CPUS": "2", "COHOP_SOLVER_THREADS": "1", "COHOP_WORKERS": "1",
                "COHOP_MAX_SOLVE_S": "10", "COHOP_GRACEFUL_TIMEOUT_S": "30", "COHOP_DRAIN_S": "0",
                **{k: str(v) for k, v in env.items()}}
        full.pop("PROMETHEUS_MULTIPROC_DIR", None)
        self.proc = subprocess.Popen([sys.executable, "-m", "cohop", "serve", "--port", str(self.port)], env=full,
                                     stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)

    def __enter__(self):
        ok = wait_for(self._healthy, 90)  # a loaded 2-core machine can take tens of seconds to import and warm
        if not ok:
            self.stop()
            raise RuntimeError("server did not start: " + (self.proc.stdout.read() if self.proc.stdout else ""))
        return self

    def _healthy(self):
        if self.proc.poll() is not None:
            raise RuntimeError(f"server exited with {self.proc.returncode} before it was healthy: "
                               + (self.proc.stdout.read() if self.proc.stdout else ""))
        try:
            return requests.get(self.url + "/v1/health", timeout=1).ok
        except requests.RequestException:
            return False

    def stop(self):
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(30)
            except subprocess.TimeoutExpired:
                self.proc.kill()

    def __exit__(self, *exc):
        self.stop()


class RawAnswer:
    """An HTTP/1.1 answer read off a raw socket: status, headers (lower-case names) and body."""

    def __init__(self, data: bytes):
        head, _, self.body = data.partition(b"\r\n\r\n")
        lines = head.decode("latin-1").split("\r\n")
        self.status = int(lines[0].split()[1]) if lines[0].startswith("HTTP/") else None
        self.headers = {k.strip().lower(): v.strip() for k, _, v in (line.partition(":") for line in lines[1:])}

    def json(self):
        return json.loads(self.body)


def read_answer(sock: socket.socket) -> RawAnswer | None:
    """Everything the server sends until it closes the connection (None if it sent nothing)."""
    data = b""
    while True:
        try:
            piece = sock.recv(65536)
        except ConnectionResetError:
            break
        if not piece:
            break
        data += piece
    return RawAnswer(data) if data else None


def send_raw(url: str, data: bytes, timeout_s: float = 30.0) -> RawAnswer | None:
    """Send raw bytes on a fresh connection and read the answer until the server closes it."""
    host, port = url.removeprefix("http://").split(":")
    with socket.create_connection((host, int(port)), timeout=timeout_s) as sock:
        sock.sendall(data)
        return read_answer(sock)
