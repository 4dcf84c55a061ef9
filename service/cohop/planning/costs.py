"""What the phases around the search cost, so that the search leaves them their time.

Deterministic estimates (functions of the site's size only), calibrated on
our 2-core machines against the bench sites and samples
(`python bench/bench_timelimits.py --phases` prints the measured costs
beside these estimates). They are deliberately on the high side
(`SAFETY`): an estimate that is too high costs some search time, one that
is too low costs the time limit.
"""

from __future__ import annotations

import numpy as np

from cohop import joint
from cohop.planning.instance import PlanningInstance

#: Fixed cost of a request around the solve: the solver process, parsing, the answer's schema and JSON.
BASE_S = 0.05
#: Preparing the instance, the greedy start and its first descent, per channel handed out (large site:
#: 2500 channels, 0.6 to 0.8 s).
BEFORE_PER_CHANNEL_S = 2.5e-4
#: One assessment (and its validation): a fixed part, per system and per channel held by a system.
ASSESS_BASE_S = 0.01
ASSESS_PER_SYSTEM_S = 8e-4
ASSESS_PER_HELD_CHANNEL_S = 7e-6
#: The joint law at Rician victims, per source, victim channel and contour point (bench_assess, every system
#: Rician at K = 6 dB: 3.7e-7 s on the medium site, 2.0e-7 s on the large one; the larger is kept).
JOINT_PER_CELL_S = 4e-7
#: The greedy construction (when the greedy baseline cannot reuse the planner's start), per channel.
GREEDY_PER_CHANNEL_S = 1e-4
#: The answer (the schema dump in the solver process, pickle, JSON): a fixed part, and per system
#: and grid channel at channel detail (the large site's answer, 2 MB: about 0.35 s).
ANSWER_BASE_S = 0.025
ANSWER_PER_SYSTEM_CHANNEL_S = 7e-6
#: Systems that move (`cohop.mobility`): one evaluation of a victim per sampled position, as a multiple of
#: one system's share of an assessment (container-terminal sample, 79 channels: 3.6 ms measured, 2.4 ms
#: share; the links rebuilt per position are the rest).
MOBILITY_PER_POSITION_FACTOR = 1.5
#: Estimates are multiplied by this.
SAFETY = 1.25
#: The share of the limit the sequences (construction, analysis, retry simulation) may take at most;
#: they always do their minimum work (see `cohop.sequences.report.sequence_work`).
SEQUENCE_SHARE = 0.25


def _held(inst: PlanningInstance) -> int:
    return int(inst.sizes.sum())


def assessment_s(n_systems: int, held_channels: int, joint_cells: int = 0) -> float:
    """One assessment; `joint_cells` (`joint_cells`) the joint law's extra work at Rician victims."""
    return ASSESS_BASE_S + n_systems * ASSESS_PER_SYSTEM_S + held_channels * ASSESS_PER_HELD_CHANNEL_S \
        + joint_cells * JOINT_PER_CELL_S


def joint_cells(inst: PlanningInstance) -> int:
    """The joint law's work in one assessment of a plan (`cohop.joint`): sources x the victim's channels x its
    contour points, summed over the Rician victims."""
    return int(sum(inst.n_systems * int(inst.sizes[v]) * joint.points(inst.prep, v) for v in range(inst.n_systems)))


def _assessment(inst: PlanningInstance) -> float:
    return assessment_s(inst.n_systems, _held(inst), joint_cells(inst))


def before_search_s(inst: PlanningInstance) -> float:
    return SAFETY * (BASE_S + BEFORE_PER_CHANNEL_S * _held(inst))


def baselines_s(inst: PlanningInstance) -> float:
    s = inst.n_systems
    total = 0.0
    for name in inst.req.baselines:
        held = int(inst.prep.usable.sum()) if name == "whole_band" else _held(inst)
        total += assessment_s(s, held, joint_cells(inst))
        if name == "greedy" and inst.req.coordination != "joint":
            total += GREEDY_PER_CHANNEL_S * _held(inst)
    return total


def mobility_s(inst: PlanningInstance) -> float:
    """The moving systems' figures at each of their positions (every answer with a moving system has them)."""
    s = inst.n_systems
    positions = sum(len(x.sampled_positions()) for x in inst.prep.site.systems if x.moves)
    return positions * MOBILITY_PER_POSITION_FACTOR * _assessment(inst) / s


def after_search_s(inst: PlanningInstance, detail: str, sequences) -> float:
    """Sequences (`sequences`: their planned work, or None), the plan's assessment and validation, the
    baselines, the binding-requirement report and the answer."""
    s, c = inst.n_systems, inst.n_channels
    total = _assessment(inst) + baselines_s(inst) + mobility_s(inst)
    total += (sequences.estimate_s if sequences is not None else 0.0)
    per_system = c if detail == "channel" else float(np.mean(inst.sizes))
    total += ANSWER_BASE_S + ANSWER_PER_SYSTEM_CHANNEL_S * s * per_system
    return SAFETY * total


def replan_after_search_s(inst: PlanningInstance, sequences) -> float:
    """The re-plan's closing phases: sequences, the assessments of the fresh plan, the re-plan and the
    current plan, validation and the answer (at channel detail)."""
    s, c = inst.n_systems, inst.n_channels
    total = 3 * _assessment(inst) + mobility_s(inst) + sequences.estimate_s
    total += ANSWER_BASE_S + ANSWER_PER_SYSTEM_CHANNEL_S * s * c
    return SAFETY * total
