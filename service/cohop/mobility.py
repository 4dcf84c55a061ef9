"""Systems that move: each system's figures at each of its sampled positions, the position where it is worst
off, and, under the site's "mean" policy, the average over its positions with the worst beside it.

Definitions (README, "Systems that move"; DEVELOPERS.md):

- A system's *sampled positions* are its `position`, its `positions`, or its `area`'s grid points
  (`cohop.site.System.sampled_positions`).
- The prepared site (`cohop.prepare`) couples every pair at its worst position pair: the least path loss over
  every pair of their sampled positions. Every headline figure, the Monte Carlo check and planning use it,
  whatever the policy.
- *Figures at a position p of system v*: v's figures as a victim with its receiver at p and every source at
  its own worst position towards p (`cohop.prepare.victim_losses`, `victim_at`), interferer levels computed
  at p. A victim's figures depend only on the links into it, so the other systems' figures are not needed.
- *Worst position*: the sampled position with the highest per-hop collision probability (the first on a tie);
  every other figure is monotone in it, since the wanted signal and fading do not depend on position.
- *Mean* (policy "mean"): the arithmetic mean of the figures at each sampled position, each position weighted
  equally (the system spends equal time at each). Sources stay at their worst position towards each p.

So mean <= figures at the worst position <= the headline (worst-policy) figure: the headline may combine the
worst positions of different sources, which the per-position figures take one victim position at a time.
Losses and levels given explicitly hold at every position: a system whose links are all given explicitly is
not re-evaluated (its positions change nothing).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cohop.assess import Assessment, SystemFigures, assess_system, channel_prefix_counts
from cohop.prepare import PreparedSite, victim_at, victim_losses
from cohop.site import Position

#: The assumption an answer carries when its site has a moving system.
MOBILITY_ASSUMPTION = (
    "Systems that move are coupled at their worst position pair (least path loss over every pair of sampled "
    "positions); every other figure of this answer and the planner use that worst-case coupling. A "
    "mobility block gives a system's figures at each of its positions with the sources at their worst "
    "position towards it, names the worst, and under mobility_policy mean averages them (equal time at each "
    "sampled position); the planner does not optimise that mean.")


@dataclass(frozen=True)
class PositionFigures:
    """A system's figures as a victim at one of its sampled positions."""

    index: int  # into the system's sampled positions (positions list order; area: x fastest, then y)
    position: Position
    collision_probability: float  # per hop
    attempt_loss_probability: float
    residual_loss_probability: float
    expected_attempts: float


@dataclass(frozen=True)
class MeanFigures:
    """The figures averaged over a system's sampled positions (policy "mean")."""

    collision_probability: float
    attempt_loss_probability: float
    residual_loss_probability: float
    expected_attempts: float


@dataclass(frozen=True)
class SystemMobility:
    id: str
    policy: str
    positions_sampled: int
    positions_matter: bool  # False: every link into it is given explicitly
    worst: PositionFigures | None  # None when its positions change nothing
    mean: MeanFigures | None  # policy "mean" only
    note: str


_FIGURES = ("collision_probability", "attempt_loss_probability", "residual_loss_probability", "expected_attempts")


def _at(index: int, position: Position, f: SystemFigures) -> PositionFigures:
    return PositionFigures(index, position, *(float(getattr(f, name)) for name in _FIGURES))


def positions_matter(prep: PreparedSite, v: int) -> bool:
    """Whether any link into v is computed from positions (a coupling loss or an interferer level)."""
    site = prep.site
    if any(not prep.coupling_explicit[a, v] for a in range(prep.n_systems) if a != v):
        return True
    sid = site.systems[v].id
    return any(all(lv.system != sid for lv in itf.levels) for itf in site.interferers)


def _note(moves: bool, matter: bool, policy: str) -> str:
    if not matter:
        return ("every coupling loss and interferer level into this system is given explicitly: its positions "
                "change nothing")
    if not moves:
        return "fixed: evaluated with every moving source at its worst position towards it"
    if policy == "mean":
        return "mean over its sampled positions (equal weight); the worst position beside it"
    return "worst case: the headline figures couple every pair at its worst position pair"


def system_mobility(prep: PreparedSite, v: int, headline: SystemFigures, sets, prefix, sizes,
                    sequences=None, sampled=None) -> SystemMobility | None:
    """One system's figures across its sampled positions; None when it has none (coupling given). `sampled`:
    every system's sampled positions, when the caller has them."""
    system, policy = prep.site.systems[v], prep.site.mobility_policy
    sampled = sampled or [s.sampled_positions() for s in prep.site.systems]
    positions = sampled[v]
    if not positions:
        return None
    matter = positions_matter(prep, v)
    note = _note(system.moves, matter, policy)
    if not matter:
        return SystemMobility(system.id, policy, len(positions), False, None, None, note)
    if len(positions) == 1:  # its only position: the headline's coupling, exactly
        per = [_at(0, positions[0], headline)]
    else:
        loss, levels = victim_losses(prep, v, positions, sampled)
        per = [_at(i, p, assess_system(victim_at(prep, v, loss[:, i], levels[:, i]), v, sets,
                                       headline.hop_set_origin, prefix, sizes, "system", sequences,
                                       compliance=False))
               for i, p in enumerate(positions)]
    worst = max(per, key=lambda f: (f.collision_probability, -f.index))
    mean = None
    if policy == "mean":
        mean = MeanFigures(*(float(np.mean([getattr(f, name) for f in per])) for name in _FIGURES))
    return SystemMobility(system.id, policy, len(positions), True, worst, mean, note)


def mobility_figures(assessment: Assessment, sequences=None) -> tuple[SystemMobility | None, ...] | None:
    """Every system's mobility block, or None when no system of the site moves."""
    prep = assessment.prepared
    if not prep.site.has_moving_systems:
        return None
    sets = [np.asarray(f.hop_set, dtype=int) for f in assessment.systems]
    prefix, sizes = channel_prefix_counts(prep, sets), np.array([s.size for s in sets])
    sampled = [s.sampled_positions() for s in prep.site.systems]
    return tuple(system_mobility(prep, v, f, sets, prefix, sizes, sequences, sampled)
                 for v, f in enumerate(assessment.systems))
