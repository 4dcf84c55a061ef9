"""Sequences for a set of hop sets, what they do, and what their order costs after retries."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cohop.prepare import PreparedSite
from cohop.sequences import theory
from cohop.sequences.analysis import SequenceReport, analyse
from cohop.sequences.construct import Sequence, build_sequences
from cohop.sequences.simulate import RetryFigures, simulate_retries

#: Simulated packets per system for the sequence-driven retry figures (default, and the server's cap).
DEFAULT_PACKETS = 5_000
MAX_PACKETS = 1_000_000


@dataclass
class SequenceOutcome:
    report: SequenceReport
    delay_spread_s: float
    retries: list[RetryFigures]  # with the planned order
    poor_order: list[RetryFigures]  # the same hop sets visited in ascending order (adjacent consecutive hops)
    common_pattern: list[RetryFigures]  # every system in one rank pattern (neighbours that move in step)
    depends_on_alignment: bool

    @property
    def orders(self) -> list[np.ndarray]:
        return [s.channels for s in self.report.sequences]


def delay_spread(prep: PreparedSite) -> float:
    return prep.site.rms_delay_spread_s or theory.DEFAULT_RMS_DELAY_SPREAD_S


#: Simulated packets x systems^2 per run (the cost grows with both): large sites get fewer packets each.
PACKET_BUDGET = 2_000_000


def packets_for(prep: PreparedSite, requested: int) -> int:
    return max(1000, min(requested, PACKET_BUDGET // max(1, prep.n_systems**2)))


def _retries(prep, orders, packets, seed, sigma) -> list[RetryFigures]:
    n = packets_for(prep, packets)
    return [simulate_retries(prep, orders, v, n, seed, sigma) for v in range(prep.n_systems)]


def common_pattern(orders: list[np.ndarray]) -> list[np.ndarray]:
    """Correlated neighbours: each order replaced by its own channels visited in the rank pattern of the
    first order with as many channels (the k-th hop goes to the channel of the same rank), so systems
    whose hop sets interleave move in step and a hit on one hop predicts hits on the next. An order whose
    length no earlier order shares keeps its own pattern."""
    patterns: dict[int, np.ndarray] = {}
    out = []
    for order in orders:
        o = np.asarray(order)
        ranks = patterns.setdefault(o.size, np.argsort(np.argsort(o, kind="stable"), kind="stable"))
        out.append(np.sort(o)[ranks])
    return out


def outcome(prep: PreparedSite, sequences: list[Sequence], notes: list[str], packets: int, seed: int) -> SequenceOutcome:
    sigma = delay_spread(prep)
    report = analyse(prep, sequences, sigma, notes)
    orders = [s.channels for s in sequences]
    poor = [np.sort(o) for o in orders]
    aligned = any(p.aligned and p.aligned_hit_rate is not None and p.aligned_hit_rate < p.unaligned_hit_rate
                  for p in report.pairs)
    return SequenceOutcome(report=report, delay_spread_s=sigma, retries=_retries(prep, orders, packets, seed, sigma),
                           poor_order=_retries(prep, poor, packets, seed, sigma),
                           common_pattern=_retries(prep, common_pattern(orders), packets, seed, sigma),
                           depends_on_alignment=aligned)


def plan_sequences(prep: PreparedSite, hop_sets, seed: int, packets: int = DEFAULT_PACKETS) -> SequenceOutcome:
    sequences, notes = build_sequences(prep, hop_sets, seed, delay_spread(prep))
    return outcome(prep, sequences, notes, packets, seed)


def given_sequences(prep: PreparedSite, packets: int, seed: int) -> SequenceOutcome | None:
    """The request's own sequences (systems without one are left out of pair figures)."""
    if all(s.sequence is None for s in prep.site.systems):
        return None
    rng = np.random.Generator(np.random.PCG64(seed))
    seqs, notes = [], []
    for v, s in enumerate(prep.site.systems):
        if s.sequence is not None:
            order, how = np.asarray(s.sequence, dtype=int), "given"
        else:  # no order given: a random one stands in (the uniform model's assumption)
            pool = np.asarray(s.hop_set, dtype=int) if s.hop_set is not None else prep.usable_channels(v)
            order, how = rng.permutation(pool), "random stand-in"
            notes.append(f"{s.id}: no sequence given; a random order stands in for it")
        seqs.append(Sequence(system=v, channels=order, construction=how, component=-1, required_spacing=1,
                             group=s.time_base_group))
    return outcome(prep, seqs, notes, packets, seed)
