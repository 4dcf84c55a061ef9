"""Process state that readiness reports: draining, from SIGTERM on.

The flag lives in one byte of anonymous shared memory, mapped when this module
is first imported. The production server (`cohop.server`) imports it in the
gunicorn master before any worker is forked, so the master's SIGTERM handler
sets it and every worker's `/v1/ready` sees it at once. In a single process
(tests, `cohop serve --dev`) it is simply process state.
"""

from __future__ import annotations

import mmap

_FLAG = mmap.mmap(-1, 1)  # MAP_SHARED | MAP_ANONYMOUS: children forked later share the page


def mark_draining() -> None:
    _FLAG[0] = 1


def is_draining() -> bool:
    return _FLAG[0] == 1


def clear_draining() -> None:
    """Back to ready (tests, and a server that is started again in the same process)."""
    _FLAG[0] = 0
