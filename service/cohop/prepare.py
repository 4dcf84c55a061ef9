"""Resolve a validated Site into arrays the evaluator and planner work on.

Index conventions: systems by position in `site.systems` (v: victim /
receiver, a: source / transmitter), channels by grid index, interferers by
position in `site.interferers` (k). Matrices that describe harm are indexed
[victim, source].
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from cohop import harm
from cohop.errors import SiteError
from cohop.physics import fading, geometry, propagation
from cohop.physics.rejection import OFFSET_TOLERANCE, bandwidth_share_db, harmful_bound_hz, window_channels
from cohop.regulatory import get_profile
from cohop.regulatory.profiles import Profile
from cohop.site import Band, Interferer, Position, Propagation, Site, System
from cohop.site_rules import NOT_RECEIVED_DBM, effective_band, level_computable
from cohop.stats.overlap import ALIGNED, OverlapCount, random_phase_overlap

#: Float noise allowance when fitting channels into band edges [Hz].
_EDGE_EPS_HZ = 1e-3


@dataclass(frozen=True)
class SourceLink:
    """How one source (system or fixed interferer) can hurt one victim."""

    level_dbm: float  # interfering level at the victim's receiver input (in its channel)
    excess_db: float  # level - (wanted - SIR): > 0 means harmful co-channel
    bound_hz: float  # offsets below this are harmful (0 none, inf all)
    overlap: OverlapCount | None  # None: a continuous interferer (time factor = activity)
    activity_fraction: float
    aligned: bool = False  # slot-aligned systems of one time-base group


@dataclass(frozen=True)
class PreparedSite:
    site: Site
    profile: Profile
    band: Band
    centres_hz: np.ndarray  # (C,)
    usable: np.ndarray  # (S, C) bool: channel fits the band for this system's bandwidth
    wanted_dbm: np.ndarray  # (S,)
    fade_margin_db: np.ndarray  # (S,)
    fade_probability: np.ndarray  # (S,) per hop
    coupling_loss_db: np.ndarray  # (S, S) [tx a, rx v]; nan on the diagonal
    coupling_explicit: np.ndarray  # (S, S) bool: given in the request, not computed
    links: tuple[tuple[SourceLink | None, ...], ...]  # [v][a]; None on the diagonal
    window: np.ndarray  # (S, S) int [v, a]: over the capture threshold on median levels iff |c - c'| <= window
    #                    (-1: never): guards and the answer's windows; harm itself is `harm` (soft when faded)
    overlap_k0: np.ndarray  # (S, S) int [v, a]: K = k0 or k0 + 1 overlapped bursts ...
    overlap_r: np.ndarray  # (S, S) float [v, a]: ... with P(K = k0 + 1) = r
    activity: np.ndarray  # (S,) activity_fraction of each system as a source
    interferer_links: tuple[tuple[SourceLink, ...], ...]  # [v][k]
    interferer_range: np.ndarray  # (S, K, 2) int [v, k]: grid channels lo <= c < hi with harm (cohop.harm)
    harm: harm.HarmTables | None = None  # the interference kernel's tables (cohop.harm): harm per offset
    derived: tuple = ()  # interferers derived from surveys (cohop.surveys.DerivedInterferer), also in site

    @property
    def n_systems(self) -> int:
        return len(self.site.systems)

    @property
    def n_channels(self) -> int:
        return int(self.centres_hz.size)

    @property
    def spacing_hz(self) -> float:
        return self.site.grid.spacing_hz

    def usable_channels(self, v: int) -> np.ndarray:
        return np.flatnonzero(self.usable[v])


def _usable(site: Site, band: Band, centres: np.ndarray) -> np.ndarray:
    half = np.array([s.bandwidth_hz / 2 for s in site.systems])[:, None]
    return (centres[None, :] - half >= band.low_hz - _EDGE_EPS_HZ) & (
        centres[None, :] + half <= band.high_hz + _EDGE_EPS_HZ)


def _distance_m(a: Position, b: Position, floor_height_m: float) -> float:
    dz = (a.floor - b.floor) * floor_height_m
    return math.sqrt((a.x_m - b.x_m) ** 2 + (a.y_m - b.y_m) ** 2 + dz**2)


def _float_or_array(x, like):
    return float(x) if np.ndim(like) == 0 else np.asarray(x, dtype=float)


def path_loss_db(prop: Propagation, frequency_hz: float, distance_m, floors: int):
    """Median path loss for one link (a float), or for an array of distances on as many floors apart (an
    array), with the site's propagation model.

    Raises ValueError (with a user-facing message) when the model lacks a
    coefficient it needs.
    """
    per_floor = prop.floor_loss_db
    if prop.model == "free_space":
        loss = _float_or_array(propagation.free_space_loss_db(frequency_hz, distance_m), distance_m)
        return loss + (per_floor or 0.0) * floors
    if prop.model == "log_distance":
        ref = prop.reference_loss_db
        if ref is None:  # common practice: free-space loss at the reference distance
            ref = float(propagation.free_space_loss_db(frequency_hz, prop.reference_distance_m))
        loss = _float_or_array(propagation.log_distance_loss_db(distance_m, prop.exponent, ref,
                                                                 prop.reference_distance_m), distance_m)
        return loss + (per_floor or 0.0) * floors
    if prop.model == "p1238":
        n = prop.power_loss_coefficient
        if n is None:
            n = propagation.p1238_power_loss_coefficient(frequency_hz, prop.environment)
        if n is None:
            raise ValueError(f"ITU-R P.1238 gives no distance power-loss coefficient for "
                             f"{prop.environment!r} at {frequency_hz / 1e6:.1f} MHz here: "
                             "set power_loss_coefficient")
        lf = per_floor * floors if per_floor is not None else propagation.p1238_floor_loss_db(
            frequency_hz, prop.environment, floors)
        if lf is None:
            raise ValueError(f"ITU-R P.1238 gives no floor penetration loss for {floors} floor(s), "
                             f"{prop.environment!r} at {frequency_hz / 1e6:.1f} MHz here: set floor_loss_db")
        return _float_or_array(propagation.p1238_loss_db(frequency_hz, distance_m, n, lf), distance_m)
    raise ValueError(f"unknown propagation model {prop.model!r}")


def _link_loss(prop: Propagation, f_hz: float, a: Position, b: Position, pointer: str) -> float:
    try:
        return path_loss_db(prop, f_hz, _distance_m(a, b, prop.floor_height_m), abs(a.floor - b.floor))
    except ValueError as exc:
        raise SiteError([(pointer, str(exc))]) from None


def _wanted_and_margin(site: Site, f_hz: float) -> tuple[np.ndarray, np.ndarray]:
    prop = site.coupling.propagation
    wanted, margin = [], []
    for i, s in enumerate(site.systems):
        if s.wanted_signal_dbm is not None:
            w = s.wanted_signal_dbm
        else:  # S = P_tx + G_tx + G_rx - L(link); same antennas at both ends (a propagation model: site_rules)
            here = Position(0.0, 0.0)
            loss = _link_loss(prop, f_hz, here, Position(s.link_distance_m, 0.0), f"/systems/{i}")
            w = s.tx_power_dbm + 2 * s.antenna_gain_dbi - loss - prop.margin_db
        wanted.append(w)
        margin.append(s.fade_margin_db if s.fade_margin_db is not None else w - s.sensitivity_dbm)
    return np.array(wanted), np.array(margin)


def _coupling(site: Site, f_hz: float) -> tuple[np.ndarray, np.ndarray]:
    n = len(site.systems)
    idx = site.system_index()
    loss = np.full((n, n), np.nan)
    explicit = np.zeros((n, n), dtype=bool)
    for e in site.coupling.entries:  # a given direction first ...
        loss[idx[e.from_system], idx[e.to_system]] = e.loss_db
        explicit[idx[e.from_system], idx[e.to_system]] = True
    for e in site.coupling.entries:  # ... then reciprocity where the reverse is not given
        a, v = idx[e.to_system], idx[e.from_system]
        if not explicit[a, v] and np.isnan(loss[a, v]):
            loss[a, v] = e.loss_db
    missing = np.isnan(loss)
    np.fill_diagonal(missing, False)
    if missing.any():  # the rest come from positions (every pair has one or the other: site_rules)
        prop = site.coupling.propagation
        gains = np.array([s.antenna_gain_dbi for s in site.systems])
        computed = least_path_losses_db(site, f_hz) - gains[:, None] - gains[None, :] - prop.margin_db
        loss[missing] = computed[missing]
    explicit_any = explicit | explicit.T
    np.fill_diagonal(explicit_any, False)
    return loss, explicit_any


def _link(victim: System, wanted_dbm: float, level_dbm: float, overlap, activity: float,
          aligned: bool = False) -> SourceLink:
    excess = level_dbm - (wanted_dbm - victim.required_sir_db)
    offsets = [p.offset_hz for p in victim.rejection]
    rejections = [p.rejection_db for p in victim.rejection]
    return SourceLink(level_dbm=level_dbm, excess_db=excess, bound_hz=harmful_bound_hz(excess, offsets, rejections),
                      overlap=overlap, activity_fraction=activity, aligned=aligned)


def _system_link(site: Site, victim: System, source: System, wanted_dbm: float, loss_db: float,
                 overlap: OverlapCount) -> tuple[SourceLink, int]:
    """Source system `source` at victim `victim` through coupling loss `loss_db`: the link and its harmful
    window in grid channels. I = P_a - C_av plus the bandwidth share of a source wider than the victim
    (`cohop.physics.rejection.bandwidth_share_db`, as for fixed interferers)."""
    level = source.tx_power_dbm - loss_db + bandwidth_share_db(victim.bandwidth_hz, source.bandwidth_hz)
    aligned = victim.time_base_group is not None and victim.time_base_group == source.time_base_group
    link = _link(victim, wanted_dbm, level, overlap, source.activity_fraction, aligned)
    return link, window_channels(link.bound_hz, site.grid.spacing_hz, site.grid.count)


def _system_links(site: Site, wanted: np.ndarray, loss: np.ndarray):
    systems = site.systems
    links, window = [], np.full((len(systems), len(systems)), -1, dtype=int)
    for v, victim in enumerate(systems):
        row = []
        for a, source in enumerate(systems):
            if a == v:
                row.append(None)
                continue
            aligned = victim.time_base_group is not None and victim.time_base_group == source.time_base_group
            overlap = ALIGNED if aligned else random_phase_overlap(
                victim.packet_airtime_s, source.packet_airtime_s, source.dwell_s)
            link, window[v, a] = _system_link(site, victim, source, wanted[v], loss[a, v], overlap)
            row.append(link)
        links.append(tuple(row))
    return tuple(links), window


def interferer_levels_dbm(site: Site, itf: Interferer, victim: System, f_hz: float,
                          places: tuple[Position, ...]):
    """The interferer's total level at the victim's receiver: the given level, NOT_RECEIVED_DBM when it is
    listed elsewhere and not computable here (site_rules.not_received), else computed at each of `places`
    (an array) from eirp_dbm and the propagation model, the planning margin lowering the loss as for
    coupling between systems."""
    given = [lv.level_dbm for lv in itf.levels if lv.system == victim.id]
    if given:
        return given[0]
    if not level_computable(site, itf, victim):
        return NOT_RECEIVED_DBM
    prop = site.coupling.propagation
    path = position_losses_db(prop, f_hz, (itf.position,), places)[0]
    return itf.eirp_dbm - (path - prop.margin_db) + victim.antenna_gain_dbi


def _interferer_level(site: Site, itf: Interferer, v: int, f_hz: float) -> float:
    # a moving victim hears the interferer at its nearest (least-loss) position (victim_losses: at each)
    victim = site.systems[v]
    return float(np.max(interferer_levels_dbm(site, itf, victim, f_hz, victim.sampled_positions())))


def _interferer_links(site: Site, wanted: np.ndarray, f_hz: float):
    return tuple(tuple(_interferer_link(victim, wanted[v], itf, _interferer_level(site, itf, v, f_hz))
                       for itf in site.interferers) for v, victim in enumerate(site.systems))


def _interferer_link(victim: System, wanted_dbm: float, itf: Interferer, total_dbm: float) -> SourceLink:
    """The interferer at the victim; its channels with harm come from the harm tables (`_victim_harm`)."""
    # share of a wideband emitter's power inside the victim's channel (flat spectrum), as for a system
    share_db = bandwidth_share_db(victim.bandwidth_hz, itf.width_hz)
    overlap = None
    if itf.burst_s is not None:
        overlap = random_phase_overlap(victim.packet_airtime_s, itf.burst_s, itf.period_s)
    return _link(victim, wanted_dbm, total_dbm + share_db, overlap, itf.activity_fraction)


def _harm_tables(site: Site, centres: np.ndarray, margin: np.ndarray, links, ilinks):
    """The interference kernel's tables (`cohop.harm`) and each interferer's channels with harm."""
    systems, c = site.systems, centres.size
    width = 1 + max(len(s.rejection) for s in systems)
    offsets = site.grid.spacing_hz * np.arange(c)
    n, k_count = len(systems), len(site.interferers)
    sys_levels, itf_levels = np.zeros((n, n, width)), np.zeros((n, k_count, width))
    sys_excess, itf_excess = np.full((n, n, width), -np.inf), np.full((n, k_count, width), -np.inf)
    steps, reach = np.zeros((n, c), dtype=np.int64), np.full((n, n), -1, dtype=np.int64)
    ranges = np.zeros((n, k_count, 2), dtype=int)
    for v, victim in enumerate(systems):
        row = _victim_harm(site, victim, v, offsets, centres, margin[v], links[v], ilinks[v], width)
        steps[v], sys_levels[v], itf_levels[v], reach[v], ranges[v] = row.steps, row.system, row.interferer, \
            row.reach, row.ranges
        sys_excess[v], itf_excess[v] = row.system_excess, row.interferer_excess
    return harm.HarmTables(system_levels=sys_levels, interferer_levels=itf_levels, steps=steps, reach=reach,
                           system_excess=sys_excess, interferer_excess=itf_excess), ranges


@dataclass(frozen=True)
class _VictimRow:
    steps: np.ndarray  # (C,)
    system: np.ndarray  # (S, L) rho
    interferer: np.ndarray  # (K, L) rho
    reach: np.ndarray  # (S,)
    ranges: np.ndarray  # (K, 2)
    system_excess: np.ndarray  # (S, L) dB
    interferer_excess: np.ndarray  # (K, L) dB


def _victim_harm(site: Site, victim: System, v: int, offsets: np.ndarray, centres: np.ndarray, margin_db: float,
                 links, ilinks, width: int) -> _VictimRow:
    """One victim's row of the harm tables: steps, levels and excess by step, reach, interferer ranges."""
    steps = harm.step_of(victim, offsets)
    excess = np.array([-np.inf if link is None else link.excess_db for link in links])
    sys_excess = harm.step_excess(victim, excess, width)
    sys_excess[v] = -np.inf
    sys_levels = harm.harm_of_excess(victim, margin_db, sys_excess)
    sys_levels[v] = 0.0
    reach = harm.reach_of(sys_levels, steps)
    itf_excess = np.array([link.excess_db for link in ilinks])
    itf_excess = harm.step_excess(victim, itf_excess, width) if ilinks else np.zeros((0, width))
    itf_levels = harm.harm_of_excess(victim, margin_db, itf_excess) if ilinks else np.zeros((0, width))
    table, _ = harm.rejection_steps(victim)
    ranges = np.zeros((len(ilinks), 2), dtype=int)
    for k, itf in enumerate(site.interferers):
        last = np.flatnonzero(itf_levels[k] > 0)  # harm falls with the step: the last step with harm
        bound = 0.0 if last.size == 0 else (math.inf if last[-1] >= table.size else float(table[last[-1]]))
        ranges[k] = _span_range(centres, itf.low_hz, itf.high_hz, bound)
    return _VictimRow(steps, sys_levels, itf_levels, reach, ranges, sys_excess, itf_excess)


def _span_range(centres: np.ndarray, low_hz: float, high_hz: float, bound_hz: float) -> tuple[int, int]:
    """Grid channels whose distance to [low, high] is below bound: a contiguous range."""
    if bound_hz <= 0:
        return 0, 0
    slack = bound_hz * (1 - OFFSET_TOLERANCE) if math.isfinite(bound_hz) else math.inf
    lo = int(np.searchsorted(centres, low_hz - slack, side="right"))
    hi = int(np.searchsorted(centres, high_hz + slack, side="left"))
    return lo, max(lo, hi)


def prepare_site(site: Site) -> PreparedSite:
    """The arrays of a site that keeps every rule of `cohop.site_rules` (the request schemas and `load_site`
    check them). SiteError only for what the physics tables lack (an ITU-R P.1238 coefficient) and for
    surveys that yield too many interferers."""
    from cohop.surveys import with_survey_interferers

    profile = get_profile(site.profile)
    band = effective_band(site)
    grid = site.grid
    centres = grid.first_centre_hz + grid.spacing_hz * np.arange(grid.count)
    site, derived = with_survey_interferers(site, centres)
    f_mid = float((centres[0] + centres[-1]) / 2)  # propagation evaluated at the grid's mid frequency
    wanted, margin = _wanted_and_margin(site, f_mid)
    fade = np.array([fading.fade_probability(s.fading.model, m, s.fading.k_factor_db)
                     for s, m in zip(site.systems, margin)])
    loss, explicit = _coupling(site, f_mid)
    links, window = _system_links(site, wanted, loss)
    k0 = np.array([[0 if link is None else link.overlap.k0 for link in row] for row in links], dtype=int)
    r = np.array([[0.0 if link is None else link.overlap.r for link in row] for row in links])
    ilinks = _interferer_links(site, wanted, f_mid)
    tables, iranges = _harm_tables(site, centres, margin, links, ilinks)
    return PreparedSite(site=site, profile=profile, band=band, centres_hz=centres,
                        usable=_usable(site, band, centres), wanted_dbm=wanted, fade_margin_db=margin,
                        fade_probability=fade, coupling_loss_db=loss, coupling_explicit=explicit,
                        links=links, window=window, overlap_k0=k0, overlap_r=r,
                        activity=np.array([s.activity_fraction for s in site.systems]),
                        interferer_links=ilinks, interferer_range=iranges, harm=tables, derived=tuple(derived))


# --- systems that move ----------------------------------------------------------

def position_losses_db(prop: Propagation, f_hz: float, sources: tuple[Position, ...],
                       victims: tuple[Position, ...]) -> np.ndarray:
    """Path loss from every source position (rows) to every victim position (columns), margin not applied.

    SiteError when the model lacks a coefficient it needs (an ITU-R P.1238 table entry)."""
    a = np.array([(p.x_m, p.y_m, p.floor) for p in sources], dtype=float)
    b = np.array([(p.x_m, p.y_m, p.floor) for p in victims], dtype=float)
    h = prop.floor_height_m
    distance = geometry.distances_m(a[:, 0], a[:, 1], a[:, 2] * h, b[:, 0], b[:, 1], b[:, 2] * h)
    floors = np.abs(a[:, 2][:, None] - b[:, 2][None, :]).astype(int)
    out = np.empty(distance.shape)
    for n in np.unique(floors):  # the floor term is one table entry per number of floors crossed
        here = floors == n
        try:
            out[here] = path_loss_db(prop, f_hz, distance[here], int(n))
        except ValueError as exc:
            raise SiteError([("/coupling/propagation", str(exc))]) from None
    return out


def least_path_losses_db(site: Site, f_hz: float) -> np.ndarray:
    """(S, S) [a, v]: the least path loss between any sampled position of system a and any of system v (a
    moving system coupled where it couples most), from one matrix over every
    sampled position, reduced per system; nan for a system without positions."""
    places = [s.sampled_positions() for s in site.systems]  # several for a system that moves
    owners = [v for v, here in enumerate(places) if here]
    out = np.full((len(places), len(places)), np.nan)
    if not owners:
        return out
    flat = tuple(p for v in owners for p in places[v])
    starts = np.cumsum([0] + [len(places[v]) for v in owners[:-1]])
    every = position_losses_db(site.coupling.propagation, f_hz, flat, flat)
    least = np.minimum.reduceat(np.minimum.reduceat(every, starts, axis=0), starts, axis=1)
    out[np.ix_(owners, owners)] = least
    return out


def victim_losses(prep: PreparedSite, v: int, places: tuple[Position, ...],
                  sampled: list[tuple[Position, ...]] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """For victim v's receiver at each of `places`: the coupling loss from every source (S, P) and the total
    level of every fixed interferer (K, P). Losses and levels computed from positions take every source at its
    own worst position towards each place; given ones hold at every place (nan on the diagonal). `sampled`:
    every system's sampled positions, when the caller has them already."""
    site, prop = prep.site, prep.site.coupling.propagation
    victim = site.systems[v]
    f_mid = float((prep.centres_hz[0] + prep.centres_hz[-1]) / 2)  # as prepare_site
    loss = np.repeat(prep.coupling_loss_db[:, v][:, None], len(places), axis=1)
    for a, source in enumerate(site.systems):
        if a != v and not prep.coupling_explicit[a, v]:
            here = source.sampled_positions() if sampled is None else sampled[a]
            path = position_losses_db(prop, f_mid, here, places).min(axis=0)
            loss[a] = path - source.antenna_gain_dbi - victim.antenna_gain_dbi - prop.margin_db
    levels = np.empty((len(site.interferers), len(places)))
    for k, itf in enumerate(site.interferers):
        levels[k] = interferer_levels_dbm(site, itf, victim, f_mid, places)
    return loss, levels


def victim_at(prep: PreparedSite, v: int, loss_db: np.ndarray, interferer_dbm: np.ndarray) -> PreparedSite:
    """The prepared site with victim v's incoming coupling losses (S,) and interferer levels (K,) replaced (one
    column of `victim_losses`): its links, windows and interferer channel ranges rebuilt; nothing else changes."""
    site, victim = prep.site, prep.site.systems[v]
    loss, window = prep.coupling_loss_db.copy(), prep.window.copy()
    loss[:, v] = loss_db
    links = list(prep.links[v])
    for a, source in enumerate(site.systems):
        if a == v:
            continue
        links[a], window[v, a] = _system_link(site, victim, source, prep.wanted_dbm[v], loss[a, v],
                                              links[a].overlap)
    iranges = prep.interferer_range.copy()
    ilinks = [_interferer_link(victim, prep.wanted_dbm[v], itf, float(interferer_dbm[k]))
              for k, itf in enumerate(site.interferers)]
    all_links = prep.links[:v] + (tuple(links),) + prep.links[v + 1:]
    all_ilinks = prep.interferer_links[:v] + (tuple(ilinks),) + prep.interferer_links[v + 1:]
    tables = prep.harm
    sys_levels, itf_levels, reach = tables.system_levels.copy(), tables.interferer_levels.copy(), tables.reach.copy()
    sys_excess, itf_excess = tables.system_excess.copy(), tables.interferer_excess.copy()
    offsets = site.grid.spacing_hz * np.arange(prep.n_channels)
    row = _victim_harm(site, victim, v, offsets, prep.centres_hz, float(prep.fade_margin_db[v]), links, ilinks,
                       sys_levels.shape[2])
    sys_levels[v], itf_levels[v], reach[v], iranges[v] = row.system, row.interferer, row.reach, row.ranges
    sys_excess[v], itf_excess[v] = row.system_excess, row.interferer_excess
    tables = replace(tables, system_levels=sys_levels, interferer_levels=itf_levels, reach=reach,
                     system_excess=sys_excess, interferer_excess=itf_excess)
    return replace(prep, coupling_loss_db=loss, links=all_links, window=window, interferer_links=all_ilinks,
                   interferer_range=iranges, harm=tables)
