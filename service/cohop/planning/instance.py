"""A planning instance: everything the planner needs, prepared as arrays.

Built from a PreparedSite (`cohop.prepare`) and PlanRequirements. Nothing is
left to the model builders: allowed channels (usable, not excluded, inside
the sub-band the profile allows; interferer exclusions taken back where they
leave too few, `cohop.planning.take_back`), pins, channel counts, separations, the
coefficients of the linearised objective, guards and ceilings.

The linearised objective (documented in DEVELOPERS.md): victim v's per-hop
collision estimate is
    c_v = (1 / N_v) sum_{c in A_v} [ q_v(c) + sum_a (beta_va / N_a) h_va(c) ],
with q_v(c) the combined hit probability of the fixed interferers (exact),
h_va(c) the harm-weighted count of a's channels around c, sum over c' in A_a of
constant_harm[v, a] + offset_harm[v, a, |c - c'|] (`cohop.harm`), and
beta_va = alpha_a E[K_va]. Since 1 - E[(1 - p)^K] <= E[K] p and
1 - prod(1 - x_i) <= sum x_i, c_v never falls below the evaluated figure;
it equals it when sources do not overlap and at most one burst can overlap.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from cohop.assess import interferer_collisions
from cohop.prepare import PreparedSite
from cohop.errors import Conflict, PlanInfeasible
from cohop.planning.headroom import Headroom, headroom_for
from cohop.planning.requirements import PlanRequirements
from cohop.planning.take_back import taken_back
from cohop.regulatory import check_compliance
from cohop.regulatory.profiles import EU868_SUBBANDS, SubBand
from cohop.regulatory.rules import FAIL
from cohop.stats import retries
from cohop.traffic.ceiling import collision_ceiling as traffic_ceiling

#: Rule kinds whose outcome depends on the number of channels (checked on synthetic hop sets).
COUNT_RULES = {"channels", "power", "eirp", "occupancy", "medium-utilisation"}
#: Rule kinds that do not depend on the channels chosen at all.
FIXED_RULES = {"bandwidth"}


def _kind(finding) -> str:
    return finding.rule.kind


@dataclass
class PlanningInstance:
    prep: PreparedSite
    req: PlanRequirements
    allowed: np.ndarray  # (S, C) bool
    pinned: np.ndarray  # (S, C) bool
    min_size: np.ndarray  # (S,) int
    max_size: np.ndarray  # (S,) int
    sizes: np.ndarray  # (S,) int, the counts this solve uses
    separation: np.ndarray  # (S,) int: two channels of a system at least this many grid steps apart
    interferer_cost: np.ndarray  # (S, C): q_v(c)
    beta: np.ndarray  # (S, S) [v, a]: alpha_a E[K_va]; 0 where a cannot hurt v
    window: np.ndarray  # (S, S) [v, a]: largest offset where the harm varies (offset_harm > 0; -1: none)
    weights: np.ndarray  # (S,)
    guards: list[tuple[int, int, int]]  # (v, a, w): no channel of a within w of one of v's (v < a)
    ceilings: np.ndarray  # (S,) max linearised per-hop collision (inf: none)
    exclusions: dict[int, list[tuple[str, list[tuple[int, int]]]]] = field(default_factory=dict)  # v -> (why, runs)
    #: v -> runs of interferer-avoided channels taken back so that v keeps its minimum count (`take_back`)
    taken_back: dict[int, list[tuple[int, int]]] = field(default_factory=dict)
    separation_citation: list[str | None] = field(default_factory=list)
    headroom: list[Headroom] = field(default_factory=list)  # spare channels per system (cohop.planning.headroom)
    #: (S, S, W + 1) [v, a, d]: the harm of a pair of channel uses at offset d above the constant part (>= 0, never
    #: rising with d; 0 beyond `window`): what the channels change (`cohop.harm`). With `fading: none`, 1 inside
    #: the harmful window and 0 outside.
    offset_harm: np.ndarray | None = None
    #: (S, S) [v, a]: the harm paid on every pair of channel uses whatever the offset (the least over the grid's
    #: offsets; 1 for a source that blocks v at every offset, 0 for most pairs).
    constant_harm: np.ndarray | None = None

    @property
    def n_systems(self) -> int:
        return self.allowed.shape[0]

    @property
    def n_channels(self) -> int:
        return self.allowed.shape[1]

    @property
    def ids(self) -> list[str]:
        return [s.id for s in self.prep.site.systems]

    def with_sizes(self, sizes) -> "PlanningInstance":
        out = PlanningInstance(**{k: getattr(self, k) for k in self.__dataclass_fields__})
        out.sizes = np.asarray(sizes, dtype=int)
        return out

    # --- coefficients of the linearised objective (depend on the sizes) ---

    def pair_coef(self) -> np.ndarray:
        """coef[v, a] = beta_va / (N_v N_a): cost to victim v per (v-channel, a-channel) pair of harm 1; a pair at
        offset d costs coef x (constant_harm + offset_harm[d])."""
        n = self.sizes.astype(float)
        return self.beta / (n[:, None] * n[None, :])

    def node_coef(self) -> np.ndarray:
        """q_v(c) / N_v per (v, c)."""
        return self.interferer_cost / self.sizes[:, None]



def without_inter_system_terms(inst: PlanningInstance) -> PlanningInstance:
    """The same instance with no inter-system terms in the objective and no guards: each system then
    only avoids what it measures (the fixed interferers and its own exclusions)."""
    out = inst.with_sizes(inst.sizes)
    out.beta = np.zeros_like(inst.beta)
    out.guards = []
    return out

# --- construction -----------------------------------------------------------

def _synthetic(prep: PreparedSite, v: int, usable: np.ndarray, n: int, gap: int):
    chans = usable[0] + gap * np.arange(n)
    if chans[-1] > usable[-1]:
        return None
    return chans


def _findings(prep: PreparedSite, v: int, chans: np.ndarray):
    return check_compliance(prep.profile, prep.site.systems[v], chans, prep.centres_hz[chans], prep.band)


def _separation(prep: PreparedSite, v: int, usable: np.ndarray) -> tuple[int, str | None]:
    """Smallest grid gap that the profile's separation rule accepts."""
    for gap in range(1, prep.n_channels):
        chans = _synthetic(prep, v, usable, 2, gap)
        if chans is None:
            break
        bad = [f for f in _findings(prep, v, chans) if _kind(f) == "separation" and f.status == FAIL]
        if not bad:
            return gap, None
        citation = bad[0].rule.citation
    return prep.n_channels, citation if usable.size > 1 else None


def _count_rules(prep: PreparedSite, v: int, usable: np.ndarray, gap: int) -> tuple[int | None, list]:
    """Smallest channel count at which no count-dependent rule fails (on evenly spaced synthetic
    hop sets at the minimum separation; the rules are monotone in the count), and any rule
    that fails whatever the count."""
    fixed = [f for f in _findings(prep, v, usable[:1]) if _kind(f) in FIXED_RULES and f.status == FAIL]
    largest = 1 + (usable[-1] - usable[0]) // gap if usable.size else 0

    def fails(n):
        chans = _synthetic(prep, v, usable, n, gap)
        return [f for f in _findings(prep, v, chans) if _kind(f) in COUNT_RULES and f.status == FAIL]

    if largest == 0:
        return None, fixed
    at_max = fails(largest)
    if at_max:
        return None, fixed + at_max
    lo, hi = 1, largest
    while lo < hi:
        mid = (lo + hi) // 2
        if fails(mid):
            lo = mid + 1
        else:
            hi = mid
    return lo, fixed


def _eu868_allowed(prep: PreparedSite, v: int, usable_mask: np.ndarray) -> tuple[np.ndarray, SubBand | None]:
    """Channels of the sub-band (whose limits the system meets) with the most usable channels."""
    s = prep.site.systems[v]
    erp = s.eirp_dbm - 2.15
    duty = s.activity_fraction * s.packet_airtime_s / s.dwell_s
    half = s.bandwidth_hz / 2
    best, best_mask = None, np.zeros_like(usable_mask)
    for band in EU868_SUBBANDS:
        if erp > band.max_erp_dbm + 1e-9 or (band.max_duty_fraction is not None and duty > band.max_duty_fraction):
            continue
        mask = usable_mask & _in_band(prep, v, band)
        if mask.sum() > best_mask.sum():
            best, best_mask = band, mask
    return best_mask, best


def _in_band(prep: PreparedSite, v: int, band: SubBand) -> np.ndarray:
    """Channels whose whole bandwidth lies in the sub-band (as `_eu868_allowed` selects them)."""
    half = prep.site.systems[v].bandwidth_hz / 2
    return (prep.centres_hz - half >= band.low_hz - 1e-6) & (prep.centres_hz + half <= band.high_hz + 1e-6)


def _collision_ceiling(max_attempt_loss, max_residual_loss, fade_p, hops, retry_limit) -> float:
    """Per-hop collision ceiling implied by a per-attempt or residual loss ceiling (inf: none; -1: none
    possible). Inverts residual = loss^(k+1), loss = 1 - (1 - coll_att)(1 - fade_att),
    coll_att = 1 - (1 - coll)^n (cohop.stats.retries)."""
    limits = []
    if max_residual_loss is not None:
        limits.append(max_residual_loss ** (1.0 / (retry_limit + 1)))
    if max_attempt_loss is not None:
        limits.append(max_attempt_loss)
    if not limits:
        return math.inf
    loss = min(limits)
    fade_att = float(retries.per_attempt(fade_p, hops))
    if loss <= fade_att:
        return -1.0  # fading alone exceeds the ceiling
    coll_att = 1.0 - (1.0 - loss) / (1.0 - fade_att)
    return 1.0 - (1.0 - coll_att) ** (1.0 / hops)


def build_instance(prep: PreparedSite, req: PlanRequirements) -> PlanningInstance:
    site = prep.site
    s_count, c_count = prep.n_systems, prep.n_channels
    channels = np.arange(c_count)
    allowed = prep.usable.copy()
    pinned = np.zeros_like(allowed)
    min_size = np.zeros(s_count, dtype=int)
    max_size = np.zeros(s_count, dtype=int)
    separation = np.ones(s_count, dtype=int)
    q = np.zeros((s_count, c_count))
    ceilings = np.full(s_count, math.inf)
    exclusions: dict[int, list] = {}
    taken: dict[int, list[tuple[int, int]]] = {}
    sep_cite = []
    headroom = []
    conflicts: list[Conflict] = []
    for v, system in enumerate(site.systems):
        r = req.for_system(system.id)
        x_itf = interferer_collisions(prep, v, channels) if site.interferers else np.zeros((0, c_count))
        q[v] = 1.0 - np.prod(1.0 - x_itf, axis=0)
        reasons = []
        hits = (x_itf > req.interferer_threshold) & prep.usable[v][None, :]
        allowed[v] &= ~hits.any(axis=0)
        fence = prep.usable[v].copy()  # where a channel taken back from the interferers may lie
        if r.excluded_channels:
            ex = np.array(r.excluded_channels, dtype=int)
            allowed[v, ex] = False
            reasons.append(("explicit exclusion", runs(ex)))
        if prep.profile.id == "erc7003-863-870":
            mask, band = _eu868_allowed(prep, v, allowed[v])
            if band is None:
                conflicts.append(Conflict("profile sub-band", (system.id,), "no sub-band of the profile admits this "
                                          "system's e.r.p. and duty cycle", "CEPT ERC Rec 70-03 Annex 1",
                                          relax="lower the power or the duty cycle"))
            allowed[v] = mask
            fence &= mask if band is None else _in_band(prep, v, band)
        exclusions[v] = reasons
        usable = np.flatnonzero(prep.usable[v])
        gap, cite = _separation(prep, v, usable) if usable.size else (1, None)
        separation[v] = gap
        sep_cite.append(cite)
        need, blockers = _count_rules(prep, v, usable, gap) if usable.size else (None, [])
        for f in blockers:
            conflicts.append(Conflict("profile rule", (system.id,), f.message, f.rule.citation,
                                      relax=f"change the system's parameters to meet {f.rule.title.lower()}"))
        room = headroom_for(prep, v, r.spare_channels, max(need or 1, 1), allowed[v], gap, r.max_channels)
        headroom.append(room)
        lo = max((need or 1) + room.spare_applied, r.min_channels or 0, len(r.pinned_channels), 1)
        hi = r.max_channels if r.max_channels is not None else lo
        if hi < lo:
            conflicts.append(Conflict("channel count", (system.id,), f"max_channels {hi} is below the minimum {lo} "
                                      "(profile, pins and min_channels)", relax="raise max_channels"))
            hi = lo
        min_size[v], max_size[v] = lo, hi
        back = _take_back(allowed[v], hits & fence, q[v], lo, gap, r)
        allowed[v, back] = True
        if back.size:
            taken[v] = runs(back)
        reasons[:0] = [(f"interferer {itf.id}", runs(np.flatnonzero(hits[k] & ~allowed[v])))
                       for k, itf in enumerate(site.interferers) if (hits[k] & ~allowed[v]).any()]
        if r.pinned_channels:
            pins = np.array(r.pinned_channels, dtype=int)
            pinned[v, pins] = True
            allowed[v, pins] |= prep.usable[v, pins]  # a pin overrides an interferer exclusion
        ceilings[v] = min(_collision_ceiling(r.max_attempt_loss, r.max_residual_loss, prep.fade_probability[v],
                                             system.hops_per_attempt, system.retry_limit),
                          traffic_ceiling(system, float(prep.fade_probability[v])))  # cohop.traffic.ceiling
    if conflicts:
        raise PlanInfeasible(conflicts)
    offset_harm, constant, varying_reach = split_offset_harm(prep)
    beta = np.where(prep.harm.reach >= 0, prep.activity[None, :] * (prep.overlap_k0 + prep.overlap_r), 0.0)
    np.fill_diagonal(beta, 0.0)
    _orthogonal_groups(site, beta, min_size, max_size)
    guards = _guards(prep, req)
    weights = np.array([s.priority_weight for s in site.systems])
    return PlanningInstance(prep=prep, req=req, allowed=allowed, pinned=pinned, min_size=min_size, max_size=max_size,
                            sizes=min_size.copy(), separation=separation, interferer_cost=q, beta=beta,
                            window=varying_reach, weights=weights, guards=guards, ceilings=ceilings,
                            exclusions=exclusions, separation_citation=sep_cite, headroom=headroom,
                            offset_harm=offset_harm, constant_harm=constant, taken_back=taken)


def split_offset_harm(prep: PreparedSite) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(varying harm (S, S, W + 1), constant harm (S, S), varying reach (S, S)) from the interference kernel
    (`cohop.harm`): harm(d) = constant + varying(d) for every grid offset d, varying(d) = 0 beyond the reach."""
    reach, constant, harm = prep.harm.varying()  # one rule for where the harm varies (cohop.harm)
    n = prep.n_systems
    reach = reach.copy()
    reach[np.arange(n), np.arange(n)] = -1
    varying = harm - constant[:, :, None]
    varying = np.where(np.arange(varying.shape[2])[None, None, :] <= reach[:, :, None], np.maximum(varying, 0.0), 0.0)
    constant = constant.copy()
    constant[np.arange(n), np.arange(n)] = 0.0
    return varying, constant, reach.astype(int)


def _take_back(allowed: np.ndarray, hits: np.ndarray, hit_cost: np.ndarray, need: int, gap: int, r) -> np.ndarray:
    """Channels that interferers made v avoid, taken back (least hit first) when the rest cannot hold `need`
    channels at separation `gap` (`cohop.planning.take_back`); never an explicit exclusion."""
    avoided = hits.any(axis=0).copy()
    avoided[np.asarray(r.excluded_channels, dtype=int)] = False
    pins = np.asarray(r.pinned_channels, dtype=int)
    return taken_back(np.flatnonzero(allowed), np.flatnonzero(avoided & ~allowed), hit_cost, need, gap, pins)


def _orthogonal_groups(site, beta: np.ndarray, min_size: np.ndarray, max_size: np.ndarray) -> None:
    """Members of a slot-aligned time-base group will get orthogonal sequences (`cohop.sequences`):
    they never share a channel in a slot, so their mutual co-channel cost is taken as zero, and they
    need one channel count (the largest of their minimums). Adjacent-window harm between them is not
    modelled here; the evaluation of the sequences shows what remains."""
    groups: dict[str, list[int]] = {}
    for v, s in enumerate(site.systems):
        if s.time_base_group is not None:
            groups.setdefault(s.time_base_group, []).append(v)
    for members in groups.values():
        if len(members) < 2:
            continue
        common = int(max(min_size[members]))
        if common > min(max_size[members]):
            continue  # no common count: planned as ordinary aligned systems
        min_size[members] = common
        max_size[members] = common
        for v in members:
            for a in members:
                beta[v, a] = 0.0


def _guards(prep: PreparedSite, req: PlanRequirements) -> list[tuple[int, int, int]]:
    if req.guard_excess_db is None:
        return []
    out = []
    for v in range(prep.n_systems):
        for a in range(v + 1, prep.n_systems):
            lv, la = prep.links[v][a], prep.links[a][v]
            if max(lv.excess_db, la.excess_db) >= req.guard_excess_db:
                w = int(max(prep.window[v, a], prep.window[a, v]))
                if w >= 0:
                    out.append((v, a, w))
    return out


def runs(chans) -> list[tuple[int, int]]:
    """Sorted channel indices as inclusive runs [(lo, hi), ...]."""
    chans = np.unique(np.asarray(chans, dtype=int))
    if chans.size == 0:
        return []
    breaks = np.flatnonzero(np.diff(chans) > 1)
    starts = np.concatenate([[0], breaks + 1])
    ends = np.concatenate([breaks, [chans.size - 1]])
    return [(int(chans[a]), int(chans[b])) for a, b in zip(starts, ends)]
