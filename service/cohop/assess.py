"""Analytic evaluation of hop sets on a prepared site.

For victim v on channel c of its hop set A_v (random-phase overlap [derived], uniform hopping):

1. One overlapped transmission of source system a on channel c' destroys the
   hop with the harm rho_va(|c - c'|) (`cohop.harm`, fading-aware capture:
   `cohop.physics.capture`). The K overlapped bursts lie on K distinct
   channels of A_a (a hop order visits distinct channels in consecutive
   dwells), each active with alpha_a: survival against a is E over K of
   E over K-subsets of prod (1 - alpha_a rho) = (prod y)^q e_m(y) / C(N_a, m)
   (`cohop.stats.overlap.distinct_survival_weighted`; with rho in {0, 1} the
   hypergeometric form); for K = 1 it is 1 - alpha_a mean(rho).
2. A fixed interferer k hurts channel c with harm rho_vk(c): continuous ones
   with probability alpha_k rho, bursty ones through the same overlap count.
3. The hop's collision probability is 1 - prod over sources of survival; the
   system's is the mean over its hop set (uniform hopping).
4. An attempt of n hops collides with 1 - (1 - collision)^n and fades with
   1 - (1 - fade)^n; its loss combines both; after k retries the residual
   loss is loss^(k + 1) (`cohop.stats.retries`).

Each per-source figure is the source's standalone probability; they combine
as 1 - prod(1 - x), which is how the totals are formed.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from cohop import harm, limits
from cohop.errors import SiteError
from cohop.physics.noise import noise_floor_dbm
from cohop.prepare import PreparedSite, SourceLink
from cohop.regulatory import check_compliance
from cohop.regulatory.rules import Finding
from cohop.stats import retries
from cohop.stats.overlap import distinct_survival_weighted, near_symmetric, survival

DETAIL_LEVELS = ("system", "channel", "source")


@dataclass(frozen=True)
class SourceFigures:
    source_id: str
    kind: str  # "system" or "interferer"
    link: SourceLink
    window_channels: int | None  # systems: over the capture threshold on median levels iff |c - c'| <= window
    channel_range: tuple[int, int] | None  # interferers: grid channels lo <= c < hi with harm
    collision_probability: float  # standalone, per hop, mean over the victim's hop set
    harm_reach: int | None = None  # systems: largest offset with harm (-1 none; the channel count: every offset)
    harm_by_offset: tuple[float, ...] | None = None  # systems: rho at channel offset d; the last holds beyond
    harm_by_distance: tuple[tuple[float, float], ...] | None = None  # interferers: (from Hz off the span, rho)
    span_hz: tuple[float, float] | None = None  # interferers: [low, high]


@dataclass(frozen=True)
class ChannelFigures:
    channel: int
    centre_hz: float
    collision_probability: float
    hop_loss_probability: float
    dominant_source: str | None
    by_source: dict[str, float] | None = None


@dataclass(frozen=True)
class CaptureFigures:
    """How a system's capture is modelled (`cohop.physics.capture`) and how its sources combine: 'product' (one
    factor per transmission: exact for a Rayleigh-faded wanted signal, and the threshold at fading none) or
    'joint' (a Rician-faded one, `cohop.joint`)."""

    wanted_fading: str
    k_factor_db: float | None
    interference_fading: str | None  # None at fading none
    combination: str


@dataclass(frozen=True)
class SystemFigures:
    index: int
    id: str
    hop_set: tuple[int, ...]
    hop_set_origin: str  # "request" or "whole band"
    wanted_dbm: float
    fade_margin_db: float
    fade_probability: float  # per hop
    collision_probability: float  # per hop
    attempt_collision_probability: float
    attempt_fade_probability: float
    attempt_loss_probability: float
    residual_loss_probability: float
    expected_attempts: float
    sources: tuple[SourceFigures, ...]
    channels: tuple[ChannelFigures, ...]
    compliance: tuple[Finding, ...]
    noise_floor_dbm: float | None = None
    capture: CaptureFigures | None = None


@dataclass(frozen=True)
class Assessment:
    prepared: PreparedSite
    systems: tuple[SystemFigures, ...]
    detail: str = "channel"
    weighted_collision: float = 0.0  # sum of priority_weight x per-hop collision
    worst_collision: float = 0.0
    worst_system: str | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)


def resolve_hop_sets(prep: PreparedSite, given: list | None = None,
                     given_origin: str = "request") -> tuple[list[np.ndarray], list[str]]:
    """Each system's hop set as a sorted array: the request's, or the whole band.

    `given` overrides the hop sets in the site (a planner passes its own, labelled `given_origin`).
    """
    out, origin = [], []
    for v, s in enumerate(prep.site.systems):
        hs = given[v] if given is not None else s.hop_set
        if hs is None:
            hs = prep.usable_channels(v)
            if hs.size == 0:
                raise SiteError([(f"/systems/{v}/bandwidth_hz",
                                  f"no channel of the grid fits {s.id!r}'s bandwidth inside the band")])
            origin.append("whole band")
        else:
            origin.append(given_origin if given is not None else "request")
        out.append(np.unique(np.asarray(hs, dtype=int)))
    return out, origin


def channel_prefix_counts(prep: PreparedSite, hop_sets: list[np.ndarray]) -> np.ndarray:
    """P[a, j] = number of a's channels below grid index j, shape (S, C + 1)."""
    ind = np.zeros((prep.n_systems, prep.n_channels + 1), dtype=np.int32)
    for a, hs in enumerate(hop_sets):
        ind[a, hs + 1] = 1
    return np.cumsum(ind, axis=1)


#: Victims evaluated together hold at most this many (victim, source, channel, offset) cells; a victim that
#: alone would hold more (harm varying over many offsets) is evaluated by steps of its rejection table instead.
_CHUNK_CELLS = 4_000_000


def system_collisions(prep: PreparedSite, v: int, channels: np.ndarray, prefix: np.ndarray,
                      sizes: np.ndarray) -> np.ndarray:
    """Standalone per-hop collision probability of each source system, (S, N_v) (`collisions_of`)."""
    occupancy = np.diff(prefix, axis=1).astype(bool)
    return collisions_of(prep, [v], [np.asarray(channels, dtype=int)], occupancy, sizes)[0]


def varying_steps(prep: PreparedSite, v: int, tail: np.ndarray | None = None) -> list[tuple[int, int, int]]:
    """The steps of v's rejection table (step, first offset, last offset) where some source's harm is above its
    constant part: what the evaluation counts channels in."""
    levels = prep.harm.system_levels[v]
    tail = levels[np.arange(prep.n_systems), prep.harm.steps[v][-1]] if tail is None else tail
    return [seg for seg in _segments(prep.harm.steps[v]) if (levels[:, seg[0]] > tail).any()]


def harm_cells(prep: PreparedSite, sets: list[np.ndarray]) -> int:
    """The evaluation's work: sum over victims of sources x hop-set channels x varying steps (at least 1), times
    1 + the points of the joint law at Rician victims (`cohop.joint`)."""
    return sum(cells for cells, _ in _harm_cells_by_victim(prep, sets))


def _harm_cells_by_victim(prep: PreparedSite, sets: list[np.ndarray]) -> list[tuple[int, int]]:
    """(cells, of which the joint law's) per victim (`harm_cells`)."""
    from cohop import joint

    out = []
    for v, s in enumerate(sets):
        plain = prep.n_systems * s.size * max(1, len(varying_steps(prep, v)))
        points = joint.points(prep, v)
        out.append((plain * (1 + points), plain * points))
    return out


def check_harm_work(prep: PreparedSite, sets: list[np.ndarray]) -> None:
    """SiteError when the evaluation's work passes `limits.MAX_HARM_CELLS`."""
    per_victim = _harm_cells_by_victim(prep, sets)
    cells = sum(c for c, _ in per_victim)
    if cells > limits.MAX_HARM_CELLS:
        joint_cells = sum(j for _, j in per_victim)
        remedy = "use fewer rejection rows, channels or systems"
        if joint_cells:
            remedy += (f", or give fewer systems a Rician wanted signal or a lower k_factor_db ({joint_cells} of "
                       f"the cells are the joint law's points at Rician victims, more points the higher the "
                       f"K-factor)")
        raise SiteError([("/systems", f"evaluating this site would take {cells} cells of harm (systems x hop-set "
                                      f"channels x rejection-table steps where the harm varies, times 1 + the "
                                      f"joint law's points at Rician victims), above the cap of "
                                      f"{limits.MAX_HARM_CELLS}; {remedy}")])


def collisions_of(prep: PreparedSite, victims: list[int], channels: list[np.ndarray], occupancy: np.ndarray,
                  sizes: np.ndarray) -> list[np.ndarray]:
    """Standalone per-hop collision probability of each source system at each victim, (S, N_v) per victim, the
    victims taken in chunks of at most _CHUNK_CELLS cells (`survivals_of`)."""
    return [np.clip(1.0 - s, 0.0, 1.0)  # rounding can leave 1 - survival a few ulps below 0
            for s in survivals_of(prep, victims, channels, occupancy, sizes)]


def survivals_of(prep: PreparedSite, victims: list[int], channels: list[np.ndarray], occupancy: np.ndarray,
                 sizes: np.ndarray, levels: np.ndarray | None = None) -> list[np.ndarray]:
    """The chance that each source system's overlapped dwells spare each victim's hop, (S, N_v) per victim (1 for
    the victim itself and for sources without harm).

    The K overlapped dwells of source a lie on K distinct channels of its hop set, a dwell on a channel at
    offset d being survived with 1 - alpha_a rho_va(d) (`cohop.harm`): E over K-subsets of the product
    (`stats.overlap.distinct_survival_weighted`). Channels within the offsets where a's harm varies are 'near';
    the rest share the constant (tail) harm. `levels` (S, S, L), complex allowed, replaces the harm tables'
    values (not their shape: reach and steps stay): the joint law's transforms (`cohop.rician_joint`)."""
    reach, _ = prep.harm.varying_reach()
    tables = prep.harm if levels is None else replace(prep.harm, system_levels=levels)
    constant = tables.tail()
    width = 2 * max(int(reach.max(initial=-1)), 0) + 1
    top = max(int(reach.max(initial=-1)), 0)
    if max(prep.n_systems * max((ch.size for ch in channels), default=0) * width,
           prep.n_systems * prep.n_systems * (top + 1)) > _CHUNK_CELLS:
        prefix = np.zeros((occupancy.shape[0], occupancy.shape[1] + 1), dtype=np.int64)
        np.cumsum(occupancy, axis=1, out=prefix[:, 1:])
        return [_survival_by_steps(prep, v, ch, prefix, sizes, tables.system_levels[v])
                for v, ch in zip(victims, channels)]
    varying = tables.offset_harm(top)
    out: list[np.ndarray] = []
    start = 0
    while start < len(victims):
        stop, cells = start, 0
        while stop < len(victims) and (stop == start or cells + prep.n_systems * channels[stop].size * width
                                       <= _CHUNK_CELLS):
            cells += prep.n_systems * channels[stop].size * width
            stop += 1
        vs = np.asarray(victims[start:stop])
        out += _chunk_survivals(prep, victims[start:stop], channels[start:stop], occupancy, sizes, reach[vs],
                                constant[vs], varying[vs])
        start = stop
    return out


def victim_survivals(prep: PreparedSite, v: int, channels: np.ndarray, occupancy: np.ndarray, sizes: np.ndarray,
                     levels: np.ndarray) -> np.ndarray:
    """`survivals_of` for victim v at several value tables at once: levels (P, S, L), complex allowed (the joint
    law's transforms at P points, `cohop.joint`), in place of v's row of the harm tables; returns (P, S, N)."""
    reach, _ = prep.harm.varying_reach()
    top = max(int(reach.max(initial=-1)), 0)
    width = 2 * top + 1
    n_points = levels.shape[0]
    if max(prep.n_systems * channels.size * width, prep.n_systems * prep.n_systems * (top + 1)) > _CHUNK_CELLS:
        prefix = np.zeros((occupancy.shape[0], occupancy.shape[1] + 1), dtype=np.int64)
        np.cumsum(occupancy, axis=1, out=prefix[:, 1:])
        return np.stack([_survival_by_steps(prep, v, channels, prefix, sizes, row) for row in levels])
    steps = prep.harm.steps[v]
    varying = levels[:, :, steps[:top + 1]]  # (P, S, W + 1)
    constant = levels[:, np.arange(prep.n_systems), steps[-1]]  # (P, S)
    per_point = max(1, _CHUNK_CELLS // max(1, prep.n_systems * channels.size * width))
    out = []
    for start in range(0, n_points, per_point):
        stop = min(n_points, start + per_point)
        count = stop - start
        out += _chunk_survivals(prep, [v] * count, [channels] * count, occupancy, sizes,
                                np.repeat(reach[v][None, :], count, axis=0), constant[start:stop],
                                varying[start:stop])
    return np.stack(out)


def _chunk_survivals(prep, victims, channels, occupancy, sizes, reach, constant, varying) -> list[np.ndarray]:
    """`survivals_of` for a chunk of victims; reach, constant (V, S) and varying (V, S, W + 1) are theirs. Only
    the sources that harm some victim of the chunk are computed (the rest spare every hop: survival 1), which
    on a wide site (sources out of reach of most victims) is most of the work saved."""
    vs = np.asarray(victims)
    harms = (prep.harm.reach[vs] >= 0)
    harms[np.arange(vs.size), vs] = False
    src = np.flatnonzero(harms.any(axis=0))
    out = [np.ones((prep.n_systems, chans.size), dtype=np.result_type(float, varying.dtype)) for chans in channels]
    if src.size:
        part = _source_survivals(prep, vs, src, channels, occupancy[src], sizes[src], reach[:, src],
                                 constant[:, src], varying[:, src])
        for i, v in enumerate(victims):
            out[i][src] = part[i][:, :channels[i].size]
            out[i][v] = 1.0
    return out


def _source_survivals(prep, vs, src, channels, occupancy, sizes, reach, constant, varying) -> np.ndarray:
    """(V, S', N) survivals of the chunk's victims vs against the sources src (per-source arrays already taken
    at src); padded channels hold junk."""
    c = prep.n_channels
    w = (varying.shape[2] - 1) if reach.max(initial=-1) >= 0 else 0
    d = np.arange(-w, w + 1)
    longest = max(ch.size for ch in channels)
    ch = np.full((len(vs), longest), -10 * (w + 1) - c)  # padding: off the grid, finds nothing
    for i, chans in enumerate(channels):
        ch[i, :chans.size] = chans
    at = ch[:, :, None] + d  # (V, N, D)
    on_grid = (at >= 0) & (at < c)
    near_offset = np.abs(d)[None, None, :] <= reach[:, :, None]  # (V, S, D)
    present = occupancy[:, np.clip(at, 0, c - 1)] & on_grid  # (S, V, N, D)
    present = present.transpose(1, 0, 2, 3) & near_offset[:, :, None, :]  # (V, S, N, D)
    activity = prep.activity[src]
    keep = 1.0 - activity[None, :, None] * varying[:, :, np.abs(d)]  # (V, S', D)
    near = present.sum(axis=3)
    far = sizes[None, :, None] - near
    far_keep = (1.0 - activity[None, :] * constant)[:, :, None]
    k0, r = prep.overlap_k0[vs][:, src, None], prep.overlap_r[vs][:, src, None]
    m_top = int(np.max(np.minimum(k0 + 1, sizes[None, :, None] - 1), initial=0))
    degree = max(0, min(m_top, int(near.max(initial=0))))
    if np.any(k0 + 1 >= sizes[None, :, None]):  # a whole pass over the hop set: the product of every factor
        product = np.where(present, keep[:, :, None, :], 1.0).prod(axis=3)
    else:
        product = np.ones(near.shape)
    e = _near_polynomials(present, keep, degree)
    n = sizes[None, :, None]
    survive = (1.0 - r) * distinct_survival_weighted(k0, e, near, product, far, far_keep, n) \
        + r * distinct_survival_weighted(k0 + 1, e, near, product, far, far_keep, n)
    survive[prep.harm.reach[vs][:, src] < 0] = 1.0
    return survive


def _offset_counts(prefix: np.ndarray, channels: np.ndarray, lo, hi) -> np.ndarray:
    """[a, i]: a's channels at an offset in [lo, hi] (either side) of channels[i]; lo, hi broadcast against
    (S, 1); empty where hi < lo."""
    c = prefix.shape[1] - 1
    lo = np.broadcast_to(np.asarray(lo), (prefix.shape[0], 1))
    hi = np.broadcast_to(np.asarray(hi), (prefix.shape[0], 1))
    ch = channels[None, :]

    def count(a, b):  # channels in [a, b]
        a, b = np.clip(a, 0, c), np.clip(b + 1, 0, c)
        return np.where(b > a, np.take_along_axis(prefix, b, axis=1) - np.take_along_axis(prefix, a, axis=1), 0)

    right = count(ch + lo, ch + hi)
    left = count(ch - hi, ch - np.maximum(lo, 1))  # offset 0 counted once, on the right
    return np.where(hi >= lo, right + left, 0)


def _segments(steps: np.ndarray) -> list[tuple[int, int, int]]:
    """(step, first offset, last offset) of each step of a victim's table that the grid's offsets fall in."""
    change = np.flatnonzero(np.diff(steps)) + 1
    starts = np.concatenate([[0], change])
    ends = np.concatenate([change - 1, [steps.size - 1]])
    return [(int(steps[a]), int(a), int(b)) for a, b in zip(starts, ends)]


def _survival_by_steps(prep: PreparedSite, v: int, channels: np.ndarray, prefix: np.ndarray, sizes: np.ndarray,
                       levels: np.ndarray) -> np.ndarray:
    """`survivals_of` for one victim, with a's near channels counted per step of v's rejection table (one harm
    per step; prefix counts, so the work does not grow with the offsets a step spans); `levels` (S, L) the
    values by step (the harm tables' own, or the joint law's transforms)."""
    tables = prep.harm
    real = tables.system_levels[v]  # (S, L): which steps vary
    steps = tables.steps[v]
    tail = real[np.arange(prep.n_systems), steps[-1]]
    tail_value = levels[np.arange(prep.n_systems), steps[-1]]
    alpha = prep.activity
    near_counts, near_keeps = [], []
    for t, lo, hi in varying_steps(prep, v, tail):
        varies = real[:, t] > tail  # this step is 'near' for source a
        near_counts.append(_offset_counts(prefix, channels, lo, hi) * varies[:, None])
        near_keeps.append((1.0 - alpha * levels[:, t])[:, None])
    near = sum(near_counts) if near_counts else np.zeros((prep.n_systems, channels.size), dtype=int)
    k0, r = prep.overlap_k0[v][:, None], prep.overlap_r[v][:, None]
    degree = int(min(np.max(np.minimum(k0 + 1, sizes[:, None] - 1)), near.max(initial=0)))
    e = near_symmetric(near_counts, near_keeps, max(degree, 0))
    product = np.ones(near.shape)
    for n, y in zip(near_counts, near_keeps):
        product = product * y**n
    far, far_keep = sizes[:, None] - near, (1.0 - alpha * tail_value)[:, None]
    survive = (1.0 - r) * distinct_survival_weighted(k0, e, near, product, far, far_keep, sizes[:, None]) \
        + r * distinct_survival_weighted(k0 + 1, e, near, product, far, far_keep, sizes[:, None])
    survive[tables.reach[v] < 0] = 1.0
    survive[v] = 1.0
    return survive


def _near_polynomials(present: np.ndarray, keep: np.ndarray, degree: int) -> np.ndarray:
    """e_j, j = 0 .. degree, of the near channels' survival factors (the elementary symmetric polynomials; e_1
    is their sum), (V, S, N, degree + 1); `present` (V, S, N, D) marks the near channels at each offset, whose
    factor is keep (V, S, D)."""
    e = np.zeros(present.shape[:3] + (degree + 1,), dtype=keep.dtype)
    e[..., 0] = 1.0
    if degree == 1:
        e[..., 1] = np.einsum("vsnd,vsd->vsn", present, keep)
    elif degree >= 2:
        for j in range(present.shape[3]):  # e_j <- e_j + y e_{j-1}, one offset's channel at a time
            y = (present[..., j] * keep[:, :, None, j])[..., None]
            e[..., 1:] = e[..., 1:] + y * e[..., :-1]
    return e


def interferer_spans(prep: PreparedSite) -> np.ndarray:
    """(K, 2) [low, high] Hz of every fixed interferer."""
    return np.array([[i.low_hz, i.high_hz] for i in prep.site.interferers], dtype=float).reshape(-1, 2)


def interferer_collisions(prep: PreparedSite, v: int, channels: np.ndarray,
                          levels: np.ndarray | None = None) -> np.ndarray:
    """Standalone per-hop collision probability of each fixed interferer, (K, N_v): a continuous one hits with
    alpha_k rho_vk(c), a bursty one with 1 - E[(1 - alpha_k rho_vk(c))^K] (its bursts on its own span);
    `levels` (K, L) as `harm.interferer_harm`."""
    rho = harm.interferer_harm(prep.harm, prep.site.systems[v], v, interferer_spans(prep), prep.centres_hz, channels,
                               levels)
    x = np.zeros(rho.shape, dtype=rho.dtype)
    for k, link in enumerate(prep.interferer_links[v]):
        if link.overlap is None:
            x[k] = link.activity_fraction * rho[k]
        else:
            x[k] = 1.0 - survival(link.overlap, link.activity_fraction * rho[k])
    return x


def _channel_figures(prep, channels, total, hop_loss, x, source_ids, detail) -> tuple[ChannelFigures, ...]:
    if detail == "system":
        return ()
    dominant = np.argmax(x, axis=0) if x.shape[0] else np.zeros(channels.size, dtype=int)
    out = []
    for i, ch in enumerate(channels):
        j = int(dominant[i])
        name = source_ids[j] if x.shape[0] and x[j, i] > 0 else None
        by_source = None
        if detail == "source":
            by_source = {source_ids[n]: float(x[n, i]) for n in np.flatnonzero(x[:, i] > 0)}
        out.append(ChannelFigures(channel=int(ch), centre_hz=float(prep.centres_hz[ch]),
                                  collision_probability=float(total[i]), hop_loss_probability=float(hop_loss[i]),
                                  dominant_source=name, by_source=by_source))
    return tuple(out)


def _harms_by_offset(prep: PreparedSite, v: int, kernel) -> list[tuple[float, ...]]:
    """For each source system a: rho at v for channel offsets 0 .. D, the last value holding at every larger
    offset: the harm where it varies (`HarmTables.varying_reach`), then the constant one if the grid reaches it."""
    reach, constant = kernel
    harm_by_d = prep.harm.system_harm(v, np.arange(max(int(reach[v].max(initial=-1)), 0) + 1))  # (S, D)
    out = []
    for a in range(prep.n_systems):
        r = int(reach[v, a])
        head = harm_by_d[a, :r + 1].tolist() if r >= 0 else []
        out.append(tuple(head + ([float(constant[v, a])] if r + 1 < prep.n_channels else [])))
    return out


def _harm_by_distance(prep: PreparedSite, v: int, k: int) -> tuple[tuple[float, float], ...]:
    """(distance from the span's nearest edge [Hz] where a step of v's table begins, rho from there on)."""
    table, _ = harm.rejection_steps(prep.site.systems[v])
    starts = np.concatenate([[0.0], table])
    return tuple((float(d), float(r)) for d, r in zip(starts, prep.harm.interferer_levels[v, k, :starts.size]))


def _source_figures(prep: PreparedSite, v: int, x_sys: np.ndarray, x_itf: np.ndarray,
                    kernel) -> tuple[SourceFigures, ...]:
    site, tables = prep.site, prep.harm
    sys_mean, itf_mean = x_sys.mean(axis=1), x_itf.mean(axis=1)
    by_offset = _harms_by_offset(prep, v, kernel)
    out = []
    for a, link in enumerate(prep.links[v]):
        if link is None:
            continue
        out.append(SourceFigures(source_id=site.systems[a].id, kind="system", link=link,
                                 window_channels=int(prep.window[v, a]), channel_range=None,
                                 collision_probability=float(sys_mean[a]), harm_reach=int(tables.reach[v, a]),
                                 harm_by_offset=by_offset[a]))
    for k, link in enumerate(prep.interferer_links[v]):
        lo, hi = prep.interferer_range[v, k]
        itf = site.interferers[k]
        out.append(SourceFigures(source_id=itf.id, kind="interferer", link=link,
                                 window_channels=None, channel_range=(int(lo), int(hi)),
                                 collision_probability=float(itf_mean[k]),
                                 harm_by_distance=_harm_by_distance(prep, v, k), span_hz=(itf.low_hz, itf.high_hz)))
    return tuple(out)


def _aligned_exact(prep: PreparedSite, v: int, channels: np.ndarray, x_sys: np.ndarray, sequences) -> None:
    """Replace the uniform figure of slot-aligned sources by the exact one when both sequences are known."""
    from cohop.sequences.analysis import aligned_channel_hits

    if sequences is None or sequences[v] is None:
        return
    for a, link in enumerate(prep.links[v]):
        if link is not None and link.aligned and sequences[a] is not None and prep.harm.reach[v, a] >= 0:
            x_sys[a] = aligned_channel_hits(prep, v, a, np.asarray(sequences[v]), np.asarray(sequences[a]), channels)


def assess_system(prep: PreparedSite, v: int, hop_sets: list[np.ndarray], origin: str, prefix: np.ndarray,
                  sizes: np.ndarray, detail: str = "channel", sequences=None, compliance: bool = True,
                  x_sys: np.ndarray | None = None, kernel=None) -> SystemFigures:
    """System v's figures; `compliance` False skips the profile checks (they do not depend on coupling: the
    per-position figures of systems that move, `cohop.mobility`). `x_sys` (`collisions_of`) and `kernel`
    (`HarmTables.varying_reach`): computed already for the whole site."""
    from cohop import joint

    system = prep.site.systems[v]
    channels = hop_sets[v]
    together = joint.joint_figures(prep, v, channels, np.diff(prefix, axis=1).astype(bool), sizes, sequences)
    if together is not None:  # a Rician wanted signal: every transmission together (cohop.joint)
        x_sys, x_itf, total = together.systems, together.interferers, together.total
        x = np.vstack([np.delete(x_sys, v, axis=0), x_itf])
    else:
        if x_sys is None:
            x_sys = system_collisions(prep, v, channels, prefix, sizes)
        x_sys = x_sys.copy()
        _aligned_exact(prep, v, channels, x_sys, sequences)
        x_itf = interferer_collisions(prep, v, channels)
        x = np.vstack([np.delete(x_sys, v, axis=0), x_itf])
        total = 1.0 - np.prod(1.0 - x, axis=0)  # combine independent sources (cohop.stats.retries)
    fade = float(prep.fade_probability[v])
    hop_loss = retries.combine_independent(total, fade)
    collision = float(total.mean())
    n = system.hops_per_attempt
    attempt_collision = float(retries.per_attempt(collision, n))
    attempt_fade = float(retries.per_attempt(fade, n))
    attempt_loss = float(retries.combine_independent(attempt_collision, attempt_fade))
    ids = [s.id for a, s in enumerate(prep.site.systems) if a != v] + [i.id for i in prep.site.interferers]
    findings = check_compliance(prep.profile, system, channels, prep.centres_hz[channels], prep.band,
                                None if sequences is None else sequences[v]) if compliance else ()
    noise = None
    if system.noise_figure_db is not None:
        noise = noise_floor_dbm(system.bandwidth_hz, system.noise_figure_db)
    return SystemFigures(
        index=v, id=system.id, hop_set=tuple(int(c) for c in channels), hop_set_origin=origin,
        wanted_dbm=float(prep.wanted_dbm[v]), fade_margin_db=float(prep.fade_margin_db[v]), fade_probability=fade,
        collision_probability=collision, attempt_collision_probability=attempt_collision,
        attempt_fade_probability=attempt_fade, attempt_loss_probability=attempt_loss,
        residual_loss_probability=float(retries.residual_loss(attempt_loss, system.retry_limit)),
        expected_attempts=float(retries.expected_attempts(attempt_loss, system.retry_limit)),
        sources=_source_figures(prep, v, x_sys, x_itf, kernel or prep.harm.varying_reach()),
        channels=_channel_figures(prep, channels, total, hop_loss, x, ids, detail),
        compliance=tuple(findings), noise_floor_dbm=noise, capture=CaptureFigures(
            wanted_fading=system.fading.model, k_factor_db=system.fading.k_factor_db,
            interference_fading=None if system.fading.model == "none" else system.fading.interference,
            combination="product" if together is None else "joint"))


def site_sequences(prep: PreparedSite) -> list | None:
    """The sequences the request gives (None for a system without one), or None if it gives none."""
    seqs = [None if s.sequence is None else np.asarray(s.sequence) for s in prep.site.systems]
    return seqs if any(q is not None for q in seqs) else None


def assess_site(prep: PreparedSite, hop_sets: list | None = None, detail: str = "channel",
                origin: str = "request", sequences: list | None = None) -> Assessment:
    """Evaluate every system; `hop_sets` overrides the site's (None: use the site's), labelled `origin`.

    `sequences` (one hop order per system, or None) make slot-aligned figures exact and let the profile
    checks see the order; by default the request's own sequences are used when hop sets are too."""
    sets, origins = resolve_hop_sets(prep, hop_sets, origin)
    if sequences is None and hop_sets is None:
        sequences = site_sequences(prep)
    return assess_hop_sets(prep, sets, origins, detail, sequences)


def assess_hop_sets(prep: PreparedSite, sets: list[np.ndarray], origins: list[str], detail: str = "channel",
                    sequences: list | None = None) -> Assessment:
    """Evaluate every system on hop sets already resolved (`resolve_hop_sets`: sorted arrays, with where each
    came from)."""
    if detail not in DETAIL_LEVELS:
        raise ValueError(f"detail must be one of {DETAIL_LEVELS}")
    check_harm_work(prep, sets)
    prefix = channel_prefix_counts(prep, sets)
    sizes = np.array([s.size for s in sets])
    occupancy = np.diff(prefix, axis=1).astype(bool)
    x_all = collisions_of(prep, list(range(prep.n_systems)), sets, occupancy, sizes)
    kernel = prep.harm.varying_reach()
    figures = tuple(assess_system(prep, v, sets, origins[v], prefix, sizes, detail, sequences, x_sys=x_all[v],
                                  kernel=kernel) for v in range(prep.n_systems))
    weights = np.array([s.priority_weight for s in prep.site.systems])
    rates = np.array([f.collision_probability for f in figures])
    worst = int(np.argmax(rates))
    notes = []
    if any(o == "whole band" for o in origins):
        notes.append("systems without a hop set were evaluated on every channel that fits their bandwidth")
    return Assessment(prepared=prep, systems=figures, detail=detail, weighted_collision=float(weights @ rates),
                      worst_collision=float(rates[worst]), worst_system=figures[worst].id, notes=tuple(notes))
