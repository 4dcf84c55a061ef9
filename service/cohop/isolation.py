"""Run a solve in its own process, so that a crash or a hard kill of the solver cannot take the server down.

Each solve runs in a fresh child of a multiprocessing fork server (a clean
process forked on demand, never a fork of a threaded web worker). The child
returns the finished answer (plain JSON data) or the domain error it raised;
if it dies instead (a segfault, the kernel's OOM killer, a SIGKILL), the
caller gets SolverCrashed and the server carries on. A fresh process per
solve also hands every byte back to the system when the solve ends.
"""

from __future__ import annotations

import multiprocessing
import threading
from typing import Any, Callable

from cohop.errors import SolverCrashed

_PRELOAD = ["cohop.planning.solve", "cohop.planning.replan", "cohop.api.present"]
_lock = threading.Lock()
_context = None


def _ctx():
    global _context
    with _lock:
        if _context is None:
            _context = multiprocessing.get_context("forkserver")
            _context.set_forkserver_preload(_PRELOAD)
        return _context


def _noop() -> None:
    return None


def warm() -> None:
    """Start the fork server now (it loads the solver modules once), not on the first solve."""
    run_isolated(_noop, timeout_s=120)


def _child(conn, func, args):
    try:
        conn.send(("ok", func(*args)))
    except BaseException as err:  # noqa: BLE001 - every error goes back to the parent
        try:
            conn.send(("error", err))
        except Exception:  # an unpicklable error: send its text
            conn.send(("error", RuntimeError(f"{type(err).__name__}: {err}")))
    finally:
        conn.close()


def run_isolated(func: Callable[..., Any], *args, timeout_s: float) -> Any:
    """func(*args) in a fresh process; its result, or its exception re-raised here."""
    ctx = _ctx()
    receiver, sender = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_child, args=(sender, func, args), daemon=True)
    proc.start()
    sender.close()
    try:
        if not receiver.poll(timeout_s):
            proc.kill()
            raise SolverCrashed(None)
        try:
            kind, value = receiver.recv()
        except EOFError:
            proc.join(5)
            raise SolverCrashed(proc.exitcode) from None
    finally:
        receiver.close()
        proc.join(5)
    if kind == "error":
        raise value
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
