"""Numba for the planner's compiled inner loops, set up once.

The compiled kernels (`planning.channel_dp`, `planning.pricing_kernels`) are cached on disk (`cache=True`)
so that only the first process on a machine pays the compilation. Numba's
default cache sits beside the source, which a read-only image cannot write;
unless `NUMBA_CACHE_DIR` is set already, the cache goes to a directory of its
own under the system's temporary directory, which every container has.
`warm()` compiles (or loads) every kernel on a tiny problem: the fork server
calls it while preloading the solver modules (`cohop.isolation`), so no
request pays for compilation; `bench/bench_plan.py` prints what it costs.
"""

from __future__ import annotations

import os
import tempfile
import time

if not os.environ.get("NUMBA_CACHE_DIR"):
    os.environ["NUMBA_CACHE_DIR"] = os.path.join(tempfile.gettempdir(), "cohop-numba-cache")

import numba  # noqa: E402  (after the cache directory is chosen)

njit = numba.njit

_warm_s: float | None = None


def warm() -> float:
    """Compile or load every kernel now; returns the seconds it took (0 after the first call)."""
    global _warm_s
    if _warm_s is not None:
        return 0.0
    from cohop.planning import channel_dp, pricing_kernels

    started = time.perf_counter()
    channel_dp.warm_kernels()
    pricing_kernels.warm()
    _warm_s = time.perf_counter() - started
    return _warm_s


def warm_seconds() -> float | None:
    """What the first `warm()` took in this process (None: not yet)."""
    return _warm_s
