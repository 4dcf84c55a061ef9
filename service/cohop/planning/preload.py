"""Imported by the solver fork server (`cohop.isolation`): compiles, or loads from numba's disk cache, every
compiled kernel of the planner once, so that each forked solve inherits them and none compiles; and
measures the machine's work speed once (`cohop.planning.calibration`), which every solve inherits too."""

from cohop.config import from_env
from cohop.planning import calibration, jit

WARM_S = jit.warm()
#: This machine's work speed, measured once before any solve is forked (unless COHOP_WORK_SPEED fixes it).
_settings = from_env()
WORK_SPEED = calibration.speed(_settings.work_speed, _settings.solver_threads)
