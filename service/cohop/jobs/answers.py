"""What the jobs share: the site prepared for a request, the 15.247(h) caution policy, and the parts of
their answers.

An answer is a result object that carries every decision the response shows
(which cautions, compliance status, what the simulation says of the analytic
figure, ...) beside the domain results it is made of; the response schemas
(`cohop.api.schemas`) dump it as it is, naming the attributes they read.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cohop.assess import Assessment, SystemFigures
from cohop.cautions import MODEL_ASSUMPTIONS, cautions_for
from cohop.errors import SiteError
from cohop.harm import capture_assumptions
from cohop.jobs.sequence_answers import SequencesAnswer
from cohop.mobility import MOBILITY_ASSUMPTION, SystemMobility, mobility_figures
from cohop.montecarlo import SimulatedRate, SiteSimulation
from cohop.prepare import PreparedSite, prepare_site
from cohop.regulatory.profiles import Profile
from cohop.regulatory.rules import FAIL, PASS, WARNING, Finding
from cohop.site_rules import not_received
from cohop.sequences.report import SequenceOutcome
from cohop.site import Site, System
from cohop.traffic.figures import TrafficFigures

#: The confidence of `SimulatedRate.interval` (its default z is the standard normal 97.5 % quantile).
SIMULATION_CONFIDENCE = 0.95


def prepared(site: Site) -> PreparedSite:
    """The request's site prepared; its problems point into the request (under /site)."""
    try:
        return prepare_site(site)
    except SiteError as err:
        raise err.under("/site") from None


def coordination_caution(profile: Profile, coordination: str | None = None,
                         sequences: SequenceOutcome | None = None) -> bool:
    """Whether an answer carries the 47 CFR 15.247(h) caution (`cohop.cautions.COORDINATION_CAUTION`).

    Only on profiles that call for it; there, a plan or re-plan carries it when its hop sets were assigned
    jointly (`coordination` "joint") or its sequences depend on slot alignment, and an assessment of the
    request's own hop sets (`coordination` None: nothing assigned here) always does, since those may
    themselves be a joint assignment."""
    if not profile.coordination_caution:
        return False
    if coordination is None:
        return True
    return coordination == "joint" or (sequences is not None and sequences.depends_on_alignment)


def compliance_status(findings) -> str:
    """fail if any finding fails, else warning if any warns, else pass."""
    statuses = {f.status for f in findings}
    return FAIL if FAIL in statuses else WARNING if WARNING in statuses else PASS


@dataclass(frozen=True)
class Compliance:
    profile: str
    status: str
    findings: tuple[Finding, ...]


@dataclass(frozen=True)
class SystemResult:
    """One system's evaluated figures with the inputs the answer repeats beside them."""

    figures: SystemFigures
    system: System
    compliance: Compliance
    mobility: SystemMobility | None = None  # sites with a moving system (cohop.mobility)


@dataclass(frozen=True)
class SimulatedFigure:
    """A simulated rate beside the analytic figure it checks."""

    id: str
    rate: SimulatedRate
    interval: tuple[float, float]
    analytic_probability: float
    within_interval: bool
    by_source: tuple[SimulatedFigure, ...] = ()


@dataclass(frozen=True)
class SimulationCheck:
    seed: int
    trials_per_system: int
    confidence: float
    systems: tuple[SimulatedFigure, ...]


@dataclass(frozen=True)
class AssessmentAnswer:
    """An assessment: the evaluated figures, the cautions and assumptions, and the optional Monte Carlo check
    and sequence figures. `assessment.prepared` gives the profile, band and survey-derived interferers."""

    assessment: Assessment
    cautions: tuple[str, ...]
    systems: tuple[SystemResult, ...]
    simulation: SimulationCheck | None = None
    sequences: SequencesAnswer | None = None  # the request's own sequences, when it gives any
    assumptions: tuple[str, ...] = MODEL_ASSUMPTIONS
    traffic: tuple[TrafficFigures, ...] = ()  # systems that give traffic (cohop.traffic)


def _simulated(sid: str, rate: SimulatedRate, analytic: float, by_source=()) -> SimulatedFigure:
    lo, hi = rate.interval()
    return SimulatedFigure(sid, rate, (lo, hi), analytic, lo <= analytic <= hi, tuple(by_source))


def simulation_check(sim: SiteSimulation, assessment: Assessment) -> SimulationCheck:
    systems = []
    for s, f in zip(sim.systems, assessment.systems):
        analytic = {src.source_id: src.collision_probability for src in f.sources}
        by_source = [_simulated(sid, r, analytic[sid]) for sid, r in s.by_source.items()]
        systems.append(_simulated(s.id, s.collision, f.collision_probability, by_source))
    return SimulationCheck(sim.seed, sim.trials_per_system, SIMULATION_CONFIDENCE, tuple(systems))


def not_received_assumptions(site) -> tuple[str, ...]:
    """One line per interferer whose levels[] leaves systems out that no level can be computed for."""
    return tuple(f"Interferer {iid!r} is taken as not received by {', '.join(repr(s) for s in ids)}: its "
                 "levels[] does not list them and no level can be computed there." for iid, ids in not_received(site))


def assessment_answer(assessment: Assessment, caution: bool, simulation: SiteSimulation | None = None,
                      sequences=None, hop_orders=None, traffic: tuple[TrafficFigures, ...] = ()) -> AssessmentAnswer:
    """`hop_orders`: the sequences the assessment used (one per system, or None), for the figures of moving
    systems at each position; `traffic`: the traffic figures of the systems that state requirements."""
    prep = assessment.prepared
    mobility = mobility_figures(assessment, hop_orders) or (None,) * len(assessment.systems)
    systems = tuple(SystemResult(f, prep.site.systems[f.index],
                                 Compliance(prep.profile.id, compliance_status(f.compliance), f.compliance), m)
                    for f, m in zip(assessment.systems, mobility))
    assumptions = (MODEL_ASSUMPTIONS + capture_assumptions(prep.site.systems)
                   + ((MOBILITY_ASSUMPTION,) if prep.site.has_moving_systems else ())
                   + not_received_assumptions(prep.site))
    return AssessmentAnswer(assessment=assessment, cautions=tuple(cautions_for(caution)), systems=systems,
                            simulation=None if simulation is None else simulation_check(simulation, assessment),
                            sequences=sequences, assumptions=assumptions, traffic=traffic)


@dataclass(frozen=True)
class PlannedSystem:
    id: str
    hop_set: tuple[int, ...]
    centres_hz: tuple[float, ...]


def planned_systems(prep: PreparedSite, hop_sets: list[np.ndarray]) -> tuple[PlannedSystem, ...]:
    return tuple(PlannedSystem(s.id, tuple(int(c) for c in hs), tuple(float(prep.centres_hz[c]) for c in hs))
                 for s, hs in zip(prep.site.systems, hop_sets))


# --- independent coordination and headroom (issue 14) -------------------------

@dataclass(frozen=True)
class SystemHeadroom:
    """How many channels a planned system can lose before it falls below its regulatory minimum, and the
    spare channels asked for (`cohop.planning.headroom`)."""

    id: str
    channel_count: int
    regulatory_min_channels: int
    can_lose_channels: int  # channel_count - regulatory_min_channels (negative: below it already)
    spare_channels_asked: int
    spare_channels_default: bool
    spare_channels_applied: int
    spare_capped_by: str | None  # None, "fit" or "max_channels"
    typical_interferer: str | None


def headroom_answer(headroom, hop_sets) -> tuple[SystemHeadroom, ...]:
    return tuple(SystemHeadroom(h.system, int(hs.size), h.regulatory_min_channels,
                                int(hs.size) - h.regulatory_min_channels, h.spare_asked, h.spare_default,
                                h.spare_applied, h.capped_by, h.typical_interferer)
                 for h, hs in zip(headroom, hop_sets))


@dataclass(frozen=True)
class SideBySide:
    """One system's figures in the joint plan and in the independent plan (uniform hopping model)."""

    id: str
    joint_channel_count: int | None
    joint_collision_probability: float | None
    joint_residual_loss_probability: float | None
    independent_channel_count: int
    independent_collision_probability: float
    independent_residual_loss_probability: float
    cost_of_independence: float | None  # independent minus joint per-hop collision probability


#: What the side-by-side figures are: both plans evaluated alike, so that the difference is the plans'.
SIDE_BY_SIDE_BASIS = ("both plans evaluated by the uniform hopping model (cohop.assess without hop orders), "
                      "so that only the hop sets differ; the independent plan's own figures with its orders "
                      "are in assessment")


@dataclass(frozen=True)
class CoordinationComparison:
    """The independent plan beside the joint plan: what lawful independence costs."""

    commissioning_order: tuple[str, ...]
    independent_basis: str
    choices: tuple  # cohop.planning.independent.SystemChoice, in commissioning order
    joint_plan: tuple[PlannedSystem, ...] | None
    joint_objective: float | None
    independent_objective: float
    objective_cost: float | None  # independent minus joint objective
    systems: tuple[SideBySide, ...]
    joint_note: str | None = None
    basis: str = SIDE_BY_SIDE_BASIS


def side_by_side(joint: Assessment | None, independent: Assessment) -> tuple[SideBySide, ...]:
    out = []
    for k, f in enumerate(independent.systems):
        j = joint.systems[k] if joint is not None else None
        out.append(SideBySide(f.id, None if j is None else len(j.hop_set),
                              None if j is None else j.collision_probability,
                              None if j is None else j.residual_loss_probability, len(f.hop_set),
                              f.collision_probability, f.residual_loss_probability,
                              None if j is None else f.collision_probability - j.collision_probability))
    return tuple(out)
