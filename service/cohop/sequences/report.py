"""Sequences for a set of hop sets, what they do, and what their order costs after retries."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from cohop.prepare import PreparedSite
from cohop.sequences import analysis
from cohop.sequences.analysis import RUN_PHASES, SequenceReport, analyse
from cohop.sequences.construct import GROUP_WORK_S, Sequence, build_sequences
from cohop.sequences.simulate import RetryFigures, simulate_all
from cohop.stats import hopping

#: Simulated packets per system for the sequence-driven retry figures, unless the request says.
DEFAULT_PACKETS = 5_000


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
    return prep.site.rms_delay_spread_s or hopping.DEFAULT_RMS_DELAY_SPREAD_S


#: Simulated packets x systems^2 per run (the cost grows with both): large sites get fewer packets each.
PACKET_BUDGET = 2_000_000


def packets_for(prep: PreparedSite, requested: int) -> int:
    return max(1000, min(requested, PACKET_BUDGET // max(1, prep.n_systems**2)))


#: Calibrated costs of the sequence phases on our 2-core machines (`bench/bench_timelimits.py --phases`
#: prints them measured beside these estimates): the construction per channel held; the analysis besides
#: the longest-run search (a base, per system, per ordered pair of systems within reach of harm: bands of
#: equal harm are built per pair, 0.3-0.4 ms each on 40 x 260 and less on the large bench site, profiled);
#: that search per (time offset x hop) cell (at most `analysis.RUN_CELLS` in all) and per cell inside the window of the exact search of
#: equal-dwell pairs (at most `analysis.DIAGONAL_WORK`); and one retry simulation per system and per
#: ordered pair within reach (its bands of equal harm: 0.25-0.35 ms each, profiled), per simulated
#: hop (packets x (retry limit + 1) x hops per attempt, summed over the systems) and per simulated hop and
#: source within reach of harm (`prep.harm.reach`; with soft harm most pairs). Three simulations run
#: (planned order, ascending order, common pattern). The two simulation figures were fitted (non-negative
#: least squares, scaled up so that none of the six sites ran over) to one simulation timed on the small,
#: medium and large bench sites and the three samples: the estimate is 1.0 to 3.1 x what they took; the
#: former per-packet figures (3e-6 s per system, 4e-8 s per pair) read 0.25 to 0.5 x under soft harm
#: (medium: 0.29 s for a simulation that took 1.13 s).
CONSTRUCT_PER_CHANNEL_S = 2.5e-5
ANALYSIS_BASE_S = 3e-3
ANALYSIS_PER_SYSTEM_S = 5e-4
ANALYSIS_PER_PAIR_S = 3e-4
RUN_CELL_S = 5e-8
DIAGONAL_CELL_S = 1.5e-7
SIM_SYSTEM_S = 1e-3
SIM_HOP_S = 3e-6
SIM_HOP_SOURCE_S = 5.8e-8
SIM_PAIR_S = 2.5e-4
SIM_RUNS = 3
#: The least work the sequences do however short the time limit.
MIN_PACKETS = 200
MIN_RUN_PHASES = 8
#: What the sequence analysis and simulations of an assessment (given sequences) may take: an assessment
#: has no time limit of its own, and this keeps it well inside the service's answer time.
ASSESSMENT_SEQUENCE_S = 1.0


@dataclass(frozen=True)
class SequenceWork:
    """How much work the sequence phases do: a function of the site and the time they may take."""

    packets: int  # simulated packets per system in each retry simulation
    run_phases: int  # time offsets tried for each pair's longest run
    estimate_s: float  # calibrated cost of that work
    group_work_s: float = GROUP_WORK_S  # CP-SAT work per slot-aligned group (calibrated seconds)
    notes: tuple[str, ...] = ()


def _run_cells(prep: PreparedSite, sizes) -> int:
    """Cells (hops) per time offset of the longest-run search over every pair with a threshold window (an
    upper bound: `analysis.longest_runs` also skips pairs with no channel inside it)."""
    n = np.asarray(sizes, dtype=float)
    dwell = np.array([s.dwell_s for s in prep.site.systems])
    natural = 2 * np.maximum(n[:, None], np.ceil(n[None, :] * dwell[None, :] / dwell[:, None]))
    windowed = (prep.window >= 0) & ~np.eye(prep.n_systems, dtype=bool)
    return int(np.minimum(natural, analysis.RUN_HORIZON_HOPS)[windowed].sum())


def _diagonal_cells(prep: PreparedSite, sizes) -> int:
    """Cells inside the threshold window the exact search of equal-dwell pairs lists at most (each channel
    once per period: a position of v meets at most 2 w + 1 positions of a), at most
    `analysis.DIAGONAL_WORK`."""
    n = np.asarray(sizes, dtype=np.int64)
    dwell = np.array([s.dwell_s for s in prep.site.systems])
    equal = np.isclose(dwell[:, None], dwell[None, :], rtol=1e-12, atol=0.0) & ~np.eye(prep.n_systems, dtype=bool)
    cells = n[:, None] * (1 + np.minimum(n[None, :], 2 * prep.window + 1))
    return int(min(cells[equal & (prep.window >= 0)].sum(), analysis.DIAGONAL_WORK))


def _sources_in_reach(prep: PreparedSite) -> np.ndarray:
    """(S,) per victim: the other systems within reach of its harm (`prep.harm.reach`; with soft harm most)."""
    return ((prep.harm.reach >= 0) & ~np.eye(prep.n_systems, dtype=bool)).sum(axis=1)


def _simulated_hop_cost(prep: PreparedSite, sources: np.ndarray) -> float:
    """Seconds of one retry simulation per packet: each system's hops per packet (retry limit + 1 attempts of
    hops_per_attempt), each also per source within its reach (`sources`, `_sources_in_reach`)."""
    hops = np.array([(s.retry_limit + 1) * s.hops_per_attempt for s in prep.site.systems], dtype=float)
    return float(SIM_HOP_S * hops.sum() + SIM_HOP_SOURCE_S * hops @ sources)


def sequence_work(prep: PreparedSite, sizes, requested_packets: int, seconds: float | None = None,
                  reason: str = "to keep the time limit") -> SequenceWork:
    """The full work (RUN_PHASES offsets, `packets_for` packets) if it fits in `seconds`; otherwise what
    is left after the fixed work (construction, analysis) is split between the longest-run search and
    the simulation, never below MIN_RUN_PHASES and MIN_PACKETS. Deterministic: the same site and limit,
    the same work."""
    s = prep.n_systems
    members: dict[str, int] = {}
    for system in prep.site.systems:
        if system.time_base_group is not None:
            members[system.time_base_group] = members.get(system.time_base_group, 0) + 1
    groups = sum(1 for n in members.values() if n > 1)
    group_work = GROUP_WORK_S if seconds is None or not groups else min(GROUP_WORK_S, 0.5 * seconds / groups)
    sources = _sources_in_reach(prep)
    pairs = int(sources.sum())
    fixed = (CONSTRUCT_PER_CHANNEL_S * float(np.sum(sizes)) + ANALYSIS_BASE_S + ANALYSIS_PER_SYSTEM_S * s
             + ANALYSIS_PER_PAIR_S * pairs + DIAGONAL_CELL_S * _diagonal_cells(prep, sizes)
             + SIM_RUNS * (SIM_SYSTEM_S * s + SIM_PAIR_S * pairs) + groups * group_work)
    per_phase = _run_cells(prep, sizes) * RUN_CELL_S
    most_cells = analysis.RUN_CELLS * RUN_CELL_S
    per_packet = SIM_RUNS * _simulated_hop_cost(prep, sources)
    phases, packets = RUN_PHASES, packets_for(prep, requested_packets)

    def cost(ph: int, pk: int) -> float:
        return fixed + min(ph * per_phase, most_cells) + pk * per_packet

    notes = []
    if seconds is not None and cost(phases, packets) > seconds:
        spare = max(0.0, seconds - fixed)
        phases = int(np.clip(math.floor(0.5 * spare / max(per_phase, 1e-12)), MIN_RUN_PHASES, RUN_PHASES))
        packets = int(np.clip(math.floor((spare - min(phases * per_phase, most_cells)) / per_packet),
                              MIN_PACKETS, packets))
        notes.append(f"{reason}, each pair's longest run was searched over {phases} time offsets "
                     f"(not {RUN_PHASES}) and the retry simulations used {packets} packets per system"
                     if phases < RUN_PHASES else
                     f"{reason}, the retry simulations used {packets} packets per system")
    return SequenceWork(packets=packets, run_phases=phases, estimate_s=cost(phases, packets), group_work_s=group_work,
                        notes=tuple(notes))


def _retries(prep, orders, packets, seed, sigma, reach, exact: bool = False) -> list[RetryFigures]:
    """`reach`: which systems can hit which (`SequenceReport.reach`; every variant visits the same channels)."""
    n = packets if exact else packets_for(prep, packets)
    return simulate_all(prep, orders, n, seed, sigma, reach)


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


def outcome(prep: PreparedSite, sequences: list[Sequence], notes: list[str], packets: int, seed: int,
            work: SequenceWork | None = None) -> SequenceOutcome:
    """Analysis and retry simulations; `work` (if given) sets the packets and the longest-run offsets."""
    sigma = delay_spread(prep)
    notes = list(notes) + (list(work.notes) if work is not None else [])
    report = analyse(prep, sequences, sigma, notes, work.run_phases if work is not None else RUN_PHASES)
    orders = [s.channels for s in sequences]
    poor = [np.sort(o) for o in orders]
    aligned = any(p.aligned and p.aligned_hit_rate is not None and p.aligned_hit_rate < p.unaligned_hit_rate
                  for p in report.pairs)
    n, exact = (work.packets, True) if work is not None else (packets, False)
    reach = report.reach
    return SequenceOutcome(report=report, delay_spread_s=sigma,
                           retries=_retries(prep, orders, n, seed, sigma, reach, exact),
                           poor_order=_retries(prep, poor, n, seed, sigma, reach, exact),
                           common_pattern=_retries(prep, common_pattern(orders), n, seed, sigma, reach, exact),
                           depends_on_alignment=aligned)


def plan_sequences(prep: PreparedSite, hop_sets, seed: int, packets: int = DEFAULT_PACKETS,
                   work: SequenceWork | None = None, budget=None) -> SequenceOutcome:
    """Sequences for `hop_sets` and what they do; `work` bounds the analysis and simulation, `budget`
    (a `cohop.deadline.Budget`) the slot-aligned construction's CP-SAT calls."""
    group_work = work.group_work_s if work is not None else GROUP_WORK_S
    sequences, notes = build_sequences(prep, hop_sets, seed, delay_spread(prep), group_work, budget=budget)
    return outcome(prep, sequences, notes, packets, seed, work)


def given_sequences(prep: PreparedSite, packets: int, seed: int,
                    seconds: float = ASSESSMENT_SEQUENCE_S) -> SequenceOutcome | None:
    """The request's own sequences, analysed and simulated within about `seconds` of work (systems without
    one get a random order of their hop set in its place)."""
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
    work = sequence_work(prep, [q.channels.size for q in seqs], packets, seconds, reason="to bound the work")
    return outcome(prep, seqs, notes, packets, seed, work)
