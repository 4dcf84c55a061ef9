"""What a plan must meet and how to search for it (validated request data)."""

from __future__ import annotations

from dataclasses import dataclass

from cohop.sequences.report import DEFAULT_PACKETS

#: Default share of hops that fixed interferers may hit on a channel before the
#: planner excludes that channel for that system.
DEFAULT_INTERFERER_THRESHOLD = 0.05

#: Default relative gap at which the search stops: the plan is then proven within 1 % of the best possible.
DEFAULT_TARGET_GAP = 0.01

#: weighted_sum and worst_system: the linearised per-hop collision (priority-weighted sum, worst system), which
#: the linear planner minimises and bounds; residual_loss: the priority-weighted residual loss after retries
#: on the evaluated figures, and worst_margin: the largest share of a system's loss ceiling (max_residual_loss,
#: max_attempt_loss) its evaluated loss takes, both reached by sensitivity-weighted rounds of it
#: (`cohop.planning.objectives`).
LINEAR_OBJECTIVES = ("weighted_sum", "worst_system")  # also what re-planning accepts (its moves are linear)
OBJECTIVES = LINEAR_OBJECTIVES + ("residual_loss", "worst_margin")
COORDINATION = ("joint", "independent")
BASELINES = ("whole_band", "random", "contiguous", "interleaved", "greedy")
#: What an independently planned system avoids (`cohop.planning.independent`): the fixed interferers and the
#: occupancy of the systems commissioned before it, or the interferers alone.
INDEPENDENT_BASES = ("occupancy", "interferers")


@dataclass(frozen=True)
class SystemRequirement:
    """Requirements on one system's hop set; None means "from the profile" or "none"."""

    system: str
    min_channels: int | None = None
    max_channels: int | None = None
    excluded_channels: tuple[int, ...] = ()
    pinned_channels: tuple[int, ...] = ()
    max_attempt_loss: float | None = None
    max_residual_loss: float | None = None
    spare_channels: int | None = None  # above the profile's minimum; None: the band's default (planning.headroom)


@dataclass(frozen=True)
class PlanRequirements:
    systems: tuple[SystemRequirement, ...] = ()
    interferer_threshold: float = DEFAULT_INTERFERER_THRESHOLD
    guard_excess_db: float | None = None  # pairs at or above this excess must not meet in their windows
    coordination: str = "joint"
    objective: str = "weighted_sum"
    time_limit_s: float = 10.0
    seed: int = 0
    #: The search stops once the plan is proven within this relative gap (objective - bound) / objective.
    target_gap: float = DEFAULT_TARGET_GAP
    baselines: tuple[str, ...] = ()
    sequence_packets: int = DEFAULT_PACKETS  # simulated packets per system for the sequence-driven retry figures
    # independent coordination (`cohop.planning.independent`): the order systems go on air (ids; systems not
    # named follow in the site's order) and what each avoids
    commissioning_order: tuple[str, ...] = ()
    independent_basis: str = "occupancy"

    def for_system(self, system_id: str) -> SystemRequirement:
        for r in self.systems:
            if r.system == system_id:
                return r
        return SystemRequirement(system=system_id)


@dataclass
class Progress:
    """What a progress callback receives while the solver works."""

    elapsed_s: float
    objective: float | None
    bound: float | None
    phase: str = ""

    @property
    def gap(self) -> float | None:
        if self.objective is None or self.bound is None or self.objective <= 0:
            return None
        return max(0.0, (self.objective - self.bound) / self.objective)
