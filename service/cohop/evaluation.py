"""The assessment use case: prepare, check request caps, evaluate, simulate."""

from __future__ import annotations

from dataclasses import dataclass

from cohop import limits
from cohop.assess import assess_site, resolve_hop_sets
from cohop.errors import SiteError
from cohop.montecarlo import simulate_site
from cohop.prepare import prepare_site
from cohop.sequences.report import DEFAULT_PACKETS, given_sequences
from cohop.site import Site


@dataclass(frozen=True)
class SimulationRequest:
    trials_per_system: int
    seed: int = 0


@dataclass(frozen=True)
class AssessmentRequest:
    site: Site
    simulation: SimulationRequest | None = None
    detail: str = "channel"


def _check_caps(req: AssessmentRequest, hop_sets, max_simulated_attempts: int) -> None:
    if req.simulation is not None:
        total = req.simulation.trials_per_system * len(req.site.systems)
        if total > max_simulated_attempts:
            raise SiteError([("/simulation/trials_per_system",
                              f"{total} simulated attempts in all exceed this server's cap of "
                              f"{max_simulated_attempts}; lower trials_per_system")])
    if req.detail == "source":
        n = len(req.site.systems)
        entries = sum(h.size for h in hop_sets) * (n - 1 + len(req.site.interferers))
        if entries > limits.MAX_SOURCE_DETAIL_ENTRIES:
            raise SiteError([("/detail", f"a per-channel breakdown by source could reach {entries} entries, above the "
                                         f"cap of {limits.MAX_SOURCE_DETAIL_ENTRIES}; ask for detail 'channel'")])


def run_assessment(req: AssessmentRequest, max_simulated_attempts: int):
    """(assessment, simulation or None, sequence outcome or None)."""
    try:
        prep = prepare_site(req.site)
        hop_sets, _ = resolve_hop_sets(prep)
    except SiteError as err:
        raise err.under("/site") from None
    _check_caps(req, hop_sets, max_simulated_attempts)
    assessment = assess_site(prep, detail=req.detail)
    simulation = None
    if req.simulation is not None:
        simulation = simulate_site(prep, req.simulation.trials_per_system, req.simulation.seed)
    seed = req.simulation.seed if req.simulation is not None else 0
    sequences = given_sequences(prep, DEFAULT_PACKETS, seed)
    return assessment, simulation, sequences
