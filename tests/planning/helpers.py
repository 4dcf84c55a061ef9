"""Small planning instances for tests."""

from __future__ import annotations

import itertools

import numpy as np

from cohop.deadline import Deadline
from cohop.planning.instance import build_instance
from cohop.planning.linear import objective_value, occupancy, system_estimates
from cohop.planning.requirements import PlanRequirements, SystemRequirement
from cohop.prepare import prepare_site
from tests import sites


def tiny_site(n_systems=3, n_channels=6, losses=None, **system_overrides) -> dict:
    """Systems with Bluetooth-like receivers on a 1 MHz custom grid; losses[(i, j)] overrides 60 dB."""
    systems = [sites.system(f"s{i}", dwell_s=0.01, packet_airtime_s=0.004, activity_fraction=0.5,
                            priority_weight=1.0 + i, **system_overrides) for i in range(n_systems)]
    body = sites.site(systems, coupling_loss_db=None, n_channels=n_channels)
    entries = []
    for i in range(n_systems):
        for j in range(i + 1, n_systems):
            loss = (losses or {}).get((i, j), 60.0)
            entries.append({"from_system": f"s{i}", "to_system": f"s{j}", "loss_db": loss})
    body["coupling"] = {"entries": entries}
    return body


def instance(body: dict, sizes, **req):
    site = sites.load(body)
    reqs = tuple(SystemRequirement(system=s.id, min_channels=n, max_channels=n, **req.pop(f"r{i}", {}))
                 for i, (s, n) in enumerate(zip(site.systems, sizes)))
    prep = prepare_site(site)
    return build_instance(prep, PlanRequirements(systems=reqs, **req))


def brute_force(inst) -> tuple[float, np.ndarray]:
    """Optimum of the linearised objective over every combination of hop sets (tiny instances only)."""
    choices = []
    for v in range(inst.n_systems):
        pool = np.flatnonzero(inst.allowed[v] | inst.pinned[v])
        pins = set(np.flatnonzero(inst.pinned[v]).tolist())
        sep = int(inst.separation[v])
        ok = [c for c in itertools.combinations(pool.tolist(), int(inst.sizes[v]))
              if pins <= set(c) and (len(c) < 2 or min(np.diff(c)) >= sep)]
        choices.append(ok)
    best, best_x = np.inf, None
    for combo in itertools.product(*choices):
        x = occupancy(combo, inst.n_systems, inst.n_channels)
        if any(np.abs(np.array(combo[v])[:, None] - np.array(combo[a])[None, :]).min() <= w
               for v, a, w in inst.guards):
            continue
        value = objective_value(inst, system_estimates(inst, x))
        if value < best - 1e-15:
            best, best_x = value, x
    return best, best_x


def roomy(seconds: float, wall_s: float = 300.0):
    """A search budget of `seconds` of work whose wall-clock end is far away: no wall-clock stop can
    intervene, so the plan depends on the work counts only, however busy the machine."""
    deadline = Deadline.of(wall_s, wall_s)
    return deadline.budget(seconds, deadline.end)
