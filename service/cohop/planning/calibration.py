"""How fast this machine does the planner's calibrated work, measured once per process at start-up.

Work budgets are counts in "calibrated seconds" (`cohop.deadline`): the phases turn them into kicks,
CP-SAT deterministic time, pricing operations and DP solves with constants measured on our 2-core
machines, deliberately on the slow side so that a busy machine keeps its time limits. On a quiet machine
the work then ends at 0.2 to 0.4 of the limit at the calibration speed (measured), which is why it is scaled. This module runs the two heaviest phases on a
fixed instance (the water-works sample): the local search for a fixed number of kicks, and CP-SAT on the
full model for a fixed deterministic time, with the workers and interleaving the service uses. The speed is
the calibrated work they stand for divided by the wall time they took (the better of two runs of each),
each probe's figure floored to a
multiple of SPEED_STEP and kept within [1, MAX_SPEED]. The search gets the slower figure in calibrated
seconds per wall second of its window (`engine.search_budget`), or the local search's alone when it will
not run CP-SAT, and the wall clock still stops every phase at its window's end. Flooring to a coarse step keeps the figure, and so the plans of `deterministic` solves, the
same from one start to the next on one machine.

The server measures in the solver fork server, before any solve is forked (`cohop.planning.preload`), so
every solve inherits the figure (about 1 s once, at start-up). The in-process app (the command line, tests)
keeps 1 (`config.IN_PROCESS`); a library caller with the default settings measures at its first plan, before
that plan's deadline starts. The setting `work_speed` (COHOP_WORK_SPEED) > 0 fixes the figure.
"""

from __future__ import annotations

import math
import time

#: The figure never leaves [1, MAX_SPEED]: a slow machine keeps the calibration (the wall clock protects it),
#: a fast one at most triples its work.
MAX_SPEED = 3.0
SPEED_STEP = 0.25
#: Calibrated seconds each probe stands for.
PROBE_LOCAL_S = 0.12
PROBE_CP_SAT_S = 0.6

_measured: dict[str, float] | None = None  # quantised figures: "local_search", "cp_sat"


def speed(setting: float, workers: int = 2) -> float:
    """The figure to use: `setting` when it is > 0, else this process's measurement (made once): the slower
    of the two probes."""
    if setting > 0:
        return float(setting)
    return measured_speed(workers)


def speed_without_cp_sat(setting: float, workers: int = 2) -> float:
    """The figure for a search that will not run CP-SAT (its model is above `max_products`: the medium and
    large bench sites): the local-search probe's alone, since CP-SAT's probe, the slower one on our machines
    (1.5 to 1.75 against 3 or more), says nothing about its phases."""
    if setting > 0:
        return float(setting)
    measured_speed(workers)
    return max(_measured["local_search"], _measured["cp_sat"])  # never below the figure for every phase


def measured_speed(workers: int = 2) -> float:
    global _measured
    if _measured is None:
        # the better of two runs of each probe (a busy moment only ever slows a probe)
        _measured = {"local_search": quantised(max(_local_search_speed() for _ in range(2))),
                     "cp_sat": quantised(max(_cp_sat_speed(workers) for _ in range(2)))}
    return min(_measured.values())


def pin(value: float | None) -> None:
    """Use `value` as this process's measurement, for every probe (None: measure again when next asked). Tests
    pin 1.0 so that their work counts do not depend on the machine."""
    global _measured
    _measured = None if value is None else {"local_search": float(value), "cp_sat": float(value)}


def quantised(raw: float) -> float:
    """Floored to a multiple of SPEED_STEP, within [1, MAX_SPEED]."""
    if not math.isfinite(raw):
        return MAX_SPEED
    return min(MAX_SPEED, max(1.0, math.floor(raw / SPEED_STEP) * SPEED_STEP))


def _probe_instance():
    from cohop import samples
    from cohop.planning.instance import build_instance
    from cohop.planning.requirements import PlanRequirements
    from cohop.prepare import prepare_site
    from cohop.site_rules import load_site

    return build_instance(prepare_site(load_site(samples.load("water_works")["site"])), PlanRequirements())


def _local_search_speed() -> float:
    from cohop.planning import search

    inst = _probe_instance()
    x = search.improve(inst, search.greedy(inst))
    kicks = search.kick_budget(inst, PROBE_LOCAL_S)
    started = time.perf_counter()
    search.iterated(inst, x, kicks, seed=1)  # no target, no stop: every kick is made
    return PROBE_LOCAL_S / max(time.perf_counter() - started, 1e-9)


def _cp_sat_speed(workers: int) -> float:
    from ortools.sat.python import cp_model

    from cohop.cpsat import DETERMINISTIC_UNITS_PER_SECOND
    from cohop.planning import model

    inst = _probe_instance()
    m, mv, objective, scale = model.full_model(inst)
    model.minimise(m, mv, inst, objective, scale)
    solver = cp_model.CpSolver()
    p = solver.parameters
    p.num_workers = max(1, int(workers))
    p.interleave_search = p.num_workers > 1
    p.interleave_batch_size = p.num_workers
    p.random_seed = 1
    p.max_deterministic_time = PROBE_CP_SAT_S * DETERMINISTIC_UNITS_PER_SECOND
    p.max_time_in_seconds = 5.0
    solver.solve(m)
    if solver.deterministic_time <= 0:
        return MAX_SPEED
    calibrated = solver.deterministic_time / DETERMINISTIC_UNITS_PER_SECOND  # the work it stood for
    return calibrated / max(solver.wall_time, 1e-9)
