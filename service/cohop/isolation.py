"""Run a solve in its own process, so that a crash, a hard kill or a runaway solver cannot take the server down.

Each solve runs in a fresh child of a multiprocessing fork server (a clean
process forked on demand, never a fork of a threaded web worker). The child
sends back the finished answer (plain JSON data) or the domain error it
raised (every `cohop.errors.DomainError` survives pickling); any other
exception is a bug, so the child sends its traceback as text, the parent
logs it and answers `SolverCrashed` (500). If the child dies instead (a
segfault, the kernel's OOM killer, a SIGKILL), the caller gets
`SolverCrashed` and the server carries on. A fresh process per solve also
hands every byte back to the system when the solve ends.

While it waits, the parent kills the child
- at `kill_at`, a hard wall-clock cap a little after the request's time limit
  (the solver keeps its own deadline; this only stops a runaway): SolverCrashed.
  A solve whose closing phases alone cost more than its limit (a very large
  site) tells the parent when it expects to end (`Deadline.expect`), and the
  cap moves to that time plus the same grace, up to `latest`;
- when the client has closed its connection (`client`, the request's socket):
  SolveAbandoned, so an abandoned request frees its solve slot at once.

Why a Process per solve and not `concurrent.futures.ProcessPoolExecutor(
max_tasks_per_child=1)`, which would otherwise be the standard choice: a pool
cannot stop one running task. `Future.cancel()` refuses once the task runs,
and killing its worker (reachable only through the pool's private
`_processes`) breaks the whole pool: the killed task and every later submit
raise BrokenProcessPool (measured on Python 3.11 with the forkserver
context). Stopping abandoned and runaway solves is the point here, so each
solve is a process we own and can kill.
"""

from __future__ import annotations

import logging
import multiprocessing
import os
import select
import socket
import threading
import time
import traceback
from typing import Any, Callable

from cohop.errors import DomainError, SolveAbandoned, SolverCrashed
from cohop import deadline as deadlines

log = logging.getLogger("cohop.solver")

#: The jobs, the engine and the response schemas; then the planner's compiled kernels, compiled or loaded from
#: numba's disk cache once in the fork server (`cohop.planning.preload`), so that no solve compiles.
_PRELOAD = ["cohop.api.solver_runner", "cohop.planning.preload"]
_lock = threading.Lock()
_context = None
#: How often the parent looks at the client's connection while the solve runs.
WATCH_INTERVAL_S = 0.2


#: Solver processes use one BLAS thread: beside CP-SAT's own threads, OpenBLAS's spinning threads made a
#: 3 ms matrix product on the large site take 100 to 136 ms at the worst of 40 calls on a busy 2-core
#: machine (1 thread: at most 8 to 10 ms; bench: two busy loops beside `linear.system_estimates`). Set
#: before the fork server starts, which is when OpenBLAS reads it; an operator's own value is kept.
BLAS_THREADS = {"OPENBLAS_NUM_THREADS": "1"}


def _ctx():
    global _context
    with _lock:
        if _context is None:
            for name, value in BLAS_THREADS.items():
                os.environ.setdefault(name, value)
            _context = multiprocessing.get_context("forkserver")
            _context.set_forkserver_preload(_PRELOAD)
        return _context


def _noop() -> None:
    return None


def warm() -> None:
    """Start the fork server now (it loads the solver modules once), not on the first solve."""
    run_isolated(_noop, kill_at=time.monotonic() + 120)


def _child(conn, func, args):
    deadlines.listen_for_expected_end(lambda end: conn.send(("expect", end)))
    try:
        message = ("ok", func(*args))
    except DomainError as err:
        message = ("error", err)
    except BaseException:  # noqa: BLE001 - a bug in the solver: its traceback goes back as text
        message = ("crash", traceback.format_exc())
    try:
        conn.send(message)
    except Exception:  # noqa: BLE001 - an answer or error that does not pickle is a bug too
        conn.send(("crash", traceback.format_exc()))
    finally:
        conn.close()


class ClientWatch:
    """Tells whether the client at the other end of a request's socket has gone away.

    A socket that polls readable and whose peek reads b"" (end of stream) or fails is closed. Data waiting
    (a pipelined request) means the client is still there. A half-closed connection (the client shut down
    its sending side but still reads) also reads as gone: like a proxy's default, we take that as given up.
    """

    def __init__(self, sock: socket.socket):
        self.sock = sock
        self.poller = select.poll()
        self.poller.register(sock.fileno(), select.POLLIN | select.POLLPRI)
        self.blind = False  # a socket we cannot peek at (TLS): only the hard cap stops its solve

    def gone(self) -> bool:
        if self.blind:
            return False
        try:
            events = self.poller.poll(0)
        except (OSError, ValueError):
            return False
        if not events:
            return False
        _, flags = events[0]
        if flags & (select.POLLHUP | select.POLLERR | select.POLLNVAL):
            return True
        try:
            return self.sock.recv(1, socket.MSG_PEEK) == b""
        except (BlockingIOError, InterruptedError):
            return False
        except ValueError:  # an SSL socket refuses flags
            self.blind = True
            return False
        except OSError:  # reset by the peer
            return True


def _watch(client) -> ClientWatch | None:
    if client is None:
        return None
    try:
        return ClientWatch(client)
    except (OSError, ValueError, AttributeError):
        return None


def run_isolated(func: Callable[..., Any], *args, kill_at: float, client=None, grace_s: float = 0.0,
                 latest: float | None = None) -> Any:
    """func(*args) in a fresh process: its result, or its domain error re-raised here.

    `kill_at` (time.monotonic()) kills it (SolverCrashed), or the solve's own expected end plus `grace_s`
    if later, never after `latest`; `client`, a connected socket, kills it when the client has gone
    (SolveAbandoned)."""
    ctx = _ctx()
    receiver, sender = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_child, args=(sender, func, args), daemon=True)
    before = time.monotonic()
    proc.start()  # the first start also launches the fork server, which loads the solver modules first
    started = time.monotonic()
    kill_at += started - before  # that start-up is not the solve's time
    latest = float("inf") if latest is None else max(kill_at, latest + started - before)
    sender.close()
    watch = _watch(client)
    try:
        while True:
            left = kill_at - time.monotonic()
            if left <= 0:
                proc.kill()
                proc.join(5)
                log.error("solver process %s killed at its wall-clock cap after %.1f s", proc.pid,
                          time.monotonic() - started)
                raise SolverCrashed(proc.exitcode)
            if receiver.poll(min(left, WATCH_INTERVAL_S)):
                try:
                    kind, value = receiver.recv()
                except EOFError:
                    proc.join(5)
                    log.error("solver process %s ended without an answer (exit code %s)", proc.pid, proc.exitcode)
                    raise SolverCrashed(proc.exitcode) from None
                if kind != "expect":
                    break
                kill_at = min(latest, max(kill_at, value + grace_s))
                continue
            if watch is not None and watch.gone():
                proc.kill()
                proc.join(5)
                after = time.monotonic() - started
                log.warning("client closed the connection: solver process %s stopped after %.1f s", proc.pid, after)
                raise SolveAbandoned(after)
    finally:
        receiver.close()
        if proc.is_alive():
            proc.join(5)
        if proc.is_alive():
            proc.kill()
            proc.join(5)
    if kind == "error":
        raise value
    if kind == "crash":
        log.error("solver failed with an unexpected error:\n%s", value)
        raise SolverCrashed(proc.exitcode)
    return value


class SolveSlots:
    """At most `n` solves at once in this process; beyond that the caller answers 503."""

    def __init__(self, n: int):
        self._free = threading.BoundedSemaphore(n)
        self._count = 0
        self._count_lock = threading.Lock()

    def try_acquire(self) -> bool:
        if not self._free.acquire(blocking=False):
            return False
        with self._count_lock:
            self._count += 1
        return True

    def release(self) -> None:
        with self._count_lock:
            self._count -= 1
        self._free.release()

    @property
    def active(self) -> int:
        return self._count
