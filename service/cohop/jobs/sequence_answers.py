"""The sequences part of an answer: each system's hop order with what it does, the pairs, the families and
what the figures owe to slot alignment."""

from __future__ import annotations

from dataclasses import dataclass

from cohop.assess import Assessment
from cohop.sequences.analysis import OrderFigures, PairFigures
from cohop.sequences.construct import Sequence
from cohop.sequences.report import SequenceOutcome
from cohop.sequences.simulate import RetryFigures
from cohop.stats.hopping import coherence_bandwidth_hz

ALIGNMENT_NOTE = ("figures of slot-aligned systems depend on keeping alignment: see unaligned_hit_rate for what "
                  "the same sequences give when it is lost")


@dataclass(frozen=True)
class SequenceRetries:
    """Residual loss simulated along the planned order (its figures first), beside the independent-attempt
    model, the same hop set in ascending order and every system in one common rank pattern."""

    packets: int
    attempt_loss: float
    residual_loss: float
    residual_interval: tuple[float, float]
    independent_residual: float
    analytic_residual_probability: float
    ascending_order: RetryFigures
    common_pattern: RetryFigures


@dataclass(frozen=True)
class SystemSequence:
    id: str
    sequence: Sequence
    family: Sequence | None  # the sequence itself when it is a member of a one-coincidence family
    centres_hz: tuple[float, ...]
    dwell_s: float
    order: OrderFigures
    required_hz: float  # coherence bandwidth of the site's delay spread: consecutive hops want this apart
    retries: SequenceRetries


@dataclass(frozen=True)
class SequencePair:
    victim: str
    source: str
    figures: PairFigures


@dataclass(frozen=True)
class FamilySummary:
    component: int
    prime: int
    members: int
    peng_fan_bound: int
    measured_max_coincidences: int | None  # the most coincidences measured between two of its members


@dataclass(frozen=True)
class Alignment:
    depends_on_alignment: bool
    groups: tuple[str, ...]
    note: str


@dataclass(frozen=True)
class SequencesAnswer:
    delay_spread_s: float
    systems: tuple[SystemSequence, ...]
    pairs: tuple[SequencePair, ...]
    families: tuple[FamilySummary, ...]
    alignment: Alignment
    notes: tuple[str, ...]


def _retries(planned: RetryFigures, analytic: float, ascending: RetryFigures, common: RetryFigures):
    return SequenceRetries(planned.packets, planned.attempt_loss, planned.residual_loss, planned.residual_interval,
                           planned.independent_residual, analytic, ascending, common)


def _families(outcome: SequenceOutcome) -> tuple[FamilySummary, ...]:
    rep = outcome.report
    out = []
    for comp, fam in rep.family_bounds.items():
        members = {s.system for s in rep.sequences if s.component == comp}
        measured = [p.coincidences_max for p in rep.pairs if p.a in members and p.b in members
                    and p.coincidences_max is not None]
        out.append(FamilySummary(comp, fam["prime"], fam["members"], fam["peng_fan_bound"],
                                 max(measured) if measured else None))
    return tuple(out)


def sequences_answer(outcome: SequenceOutcome, assessment: Assessment) -> SequencesAnswer:
    prep = assessment.prepared
    rep = outcome.report
    ids = [s.id for s in prep.site.systems]
    required_hz = coherence_bandwidth_hz(outcome.delay_spread_s)
    systems = tuple(
        SystemSequence(id=ids[seq.system], sequence=seq, family=None if seq.prime is None else seq,
                       centres_hz=tuple(float(prep.centres_hz[c]) for c in seq.channels),
                       dwell_s=prep.site.systems[seq.system].dwell_s, order=order, required_hz=required_hz,
                       retries=_retries(retry, fig.residual_loss_probability, poor, common))
        for seq, order, retry, poor, common, fig in zip(rep.sequences, rep.orders, outcome.retries,
                                                        outcome.poor_order, outcome.common_pattern,
                                                        assessment.systems))
    pairs = tuple(SequencePair(ids[p.a], ids[p.b], p) for p in rep.pairs)
    groups = tuple(sorted({s.group for s in rep.sequences if s.group}))
    alignment = Alignment(outcome.depends_on_alignment, groups, ALIGNMENT_NOTE if outcome.depends_on_alignment else "")
    return SequencesAnswer(outcome.delay_spread_s, systems, pairs, _families(outcome), alignment, tuple(rep.notes))
