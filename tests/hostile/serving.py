"""The real server for the corpus, with its output drained.

`tests.production.procs.Server` pipes the server's output and never reads it: after a few hundred
logged requests the pipe is full and the server blocks writing its access log. The corpus sends
hundreds, so a thread reads the pipe (keeping the last lines for a failure report).
"""

from __future__ import annotations

import collections
import contextlib
import threading

from tests.production.procs import Server


@contextlib.contextmanager
def drained_server(**env):
    with Server(**env) as server:
        server.log = collections.deque(maxlen=500)
        reader = threading.Thread(target=lambda: server.log.extend(server.proc.stdout), daemon=True)
        reader.start()
        yield server
