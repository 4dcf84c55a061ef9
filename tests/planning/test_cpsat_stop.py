"""An early stop at a proven bound survives interleaved CP-SAT workers.

With `interleave_search` and two workers, OR-Tools 9.15 aborts the whole process ("Check failed:
solution->size() == postsolve_mapping.size()") when `stop_search()` is called inside the solution callback;
the water works' full model stopped at its first solution reproduced it. `cohop.cpsat` asks for the stop
from a thread of its own. The call runs in a child process so that a regression fails this test instead of
killing the test worker."""

from __future__ import annotations

import subprocess
import sys

CHILD = """
from cohop import cpsat, samples
from cohop.planning import model, search
from cohop.planning.instance import build_instance
from cohop.planning.requirements import PlanRequirements
from cohop.prepare import prepare_site
from tests import sites
from tests.planning.helpers import roomy

inst = build_instance(prepare_site(sites.load(samples.load("water_works_us915")["site"])), PlanRequirements(seed=2))
start = search.greedy(inst)
m, mv, objective, scale = model.full_model(inst, start)
model.minimise(m, mv, inst, objective, scale)
seen = []
out = cpsat.run(m, roomy(3.0), "CP-SAT", 3.0, workers=2, seed=2, deterministic=True, gap_limit=0.9,
                stop_at=2**62, on_solution=seen.append)
assert out.solver.parameters.interleave_search
print(out.name, len(seen))
"""


def test_a_stop_at_the_first_solution_returns_it_with_interleaved_workers():
    child = subprocess.run([sys.executable, "-c", CHILD], capture_output=True, text=True, timeout=240)
    assert child.returncode == 0, child.stderr[-2000:]
    status, solutions = child.stdout.split()
    assert status in ("FEASIBLE", "OPTIMAL") and int(solutions) >= 1
