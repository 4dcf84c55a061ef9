"""Imported by the solver fork server (`cohop.isolation`): compiles, or loads from numba's disk cache, every
compiled kernel of the planner once, so that each forked solve inherits them and none compiles."""

from cohop.planning import jit

WARM_S = jit.warm()
