"""The assessment job: prepare the site, resolve the hop sets once, check the request's work caps, evaluate,
simulate, and answer."""

from __future__ import annotations

from cohop import limits
from cohop.assess import assess_hop_sets, resolve_hop_sets, site_sequences
from cohop.errors import SiteError
from cohop.jobs.answers import AssessmentAnswer, assessment_answer, coordination_caution, prepared
from cohop.jobs.requests import AssessmentRequest
from cohop.jobs.sequence_answers import sequences_answer
from cohop.montecarlo import simulate_site
from cohop.sequences.report import DEFAULT_PACKETS, given_sequences
from cohop.traffic.figures import site_traffic, work_problems
from cohop.traffic.orders import traffic_orders


def _traffic(prep, sets, seed: int):
    """The traffic figures of the systems that give traffic (none: no orders built)."""
    if not any(s.traffic is not None for s in prep.site.systems):
        return ()
    orders, origins = traffic_orders(prep, sets, seed)
    if problems := work_problems(prep, orders):
        raise SiteError([("/site/" + "/".join(str(p) for p in path), msg) for path, msg in problems])
    return site_traffic(prep, sets, orders, origins, seed=seed)


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


def run_assessment(req: AssessmentRequest, max_simulated_attempts: int) -> AssessmentAnswer:
    """The figures of the request's hop sets (or the whole band where none is given), the Monte Carlo check
    if asked for, and the figures of the request's own sequences if it gives any."""
    prep = prepared(req.site)
    try:
        sets, origins = resolve_hop_sets(prep)
    except SiteError as err:
        raise err.under("/site") from None
    _check_caps(req, sets, max_simulated_attempts)
    hop_orders = site_sequences(prep)
    assessment = assess_hop_sets(prep, sets, origins, req.detail, hop_orders)
    simulation = None
    if req.simulation is not None:
        simulation = simulate_site(prep, req.simulation.trials_per_system, req.simulation.seed, sets)
    seed = req.simulation.seed if req.simulation is not None else 0
    outcome = given_sequences(prep, DEFAULT_PACKETS, seed)
    sequences = None if outcome is None else sequences_answer(outcome, assessment)
    traffic = _traffic(prep, sets, seed)
    return assessment_answer(assessment, coordination_caution(prep.profile), simulation, sequences, hop_orders,
                             traffic)
