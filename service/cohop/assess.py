"""Analytic evaluation of hop sets on a prepared site.

For victim v on channel c of its hop set A_v (random-phase overlap [derived], uniform hopping):

1. Source system a hurts the hop when one of its overlapped bursts lands on a
   channel c' of A_a with |c - c'| <= window[v, a] (`cohop.prepare`). With h
   such channels, the K overlapped bursts lie on K distinct channels of A_a
   (a hop order visits distinct channels in consecutive dwells), each active
   with alpha_a: survival against a is E over K of (1 - alpha_a)^(h q)
   E[(1 - alpha_a)^J], J hypergeometric (`cohop.stats.overlap`); for K = 1
   it is 1 - alpha_a h / |A_a|.
2. A fixed interferer k hurts channels in its harmful range: continuous ones
   with probability alpha_k, bursty ones through the same overlap count.
3. The hop's collision probability is 1 - prod over sources of survival; the
   system's is the mean over its hop set (uniform hopping).
4. An attempt of n hops collides with 1 - (1 - collision)^n and fades with
   1 - (1 - fade)^n; its loss combines both; after k retries the residual
   loss is loss^(k + 1) (`cohop.stats.retries`).

Each per-source figure is the source's standalone probability; they combine
as 1 - prod(1 - x), which is how the totals are formed.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from cohop.errors import SiteError
from cohop.physics.noise import noise_floor_dbm
from cohop.prepare import PreparedSite, SourceLink
from cohop.regulatory import check_compliance
from cohop.regulatory.rules import Finding
from cohop.stats import retries
from cohop.stats.overlap import survival, survival_distinct

DETAIL_LEVELS = ("system", "channel", "source")


@dataclass(frozen=True)
class SourceFigures:
    source_id: str
    kind: str  # "system" or "interferer"
    link: SourceLink
    window_channels: int | None  # systems: harmful iff |c - c'| <= window (-1: never)
    channel_range: tuple[int, int] | None  # interferers: harmful grid channels lo <= c < hi
    collision_probability: float  # standalone, per hop, mean over the victim's hop set


@dataclass(frozen=True)
class ChannelFigures:
    channel: int
    centre_hz: float
    collision_probability: float
    hop_loss_probability: float
    dominant_source: str | None
    by_source: dict[str, float] | None = None


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


def system_hits(prep: PreparedSite, v: int, channels: np.ndarray, prefix: np.ndarray) -> np.ndarray:
    """h[a, i]: a's channels within the harmful window of v's channel i, (S, N_v)."""
    c = prep.n_channels
    w = prep.window[v][:, None]
    lo = np.clip(channels[None, :] - w, 0, c)
    hi = np.clip(channels[None, :] + w + 1, 0, c)
    h = np.take_along_axis(prefix, hi, axis=1) - np.take_along_axis(prefix, lo, axis=1)
    h[prep.window[v] < 0] = 0
    h[v] = 0
    return h


def system_collisions(prep: PreparedSite, v: int, channels: np.ndarray, prefix: np.ndarray,
                      sizes: np.ndarray) -> np.ndarray:
    """Standalone per-hop collision probability of each source system, (S, N_v)."""
    h = system_hits(prep, v, channels, prefix)
    x = 1.0 - survival_distinct(prep.overlap_k0[v][:, None], prep.overlap_r[v][:, None], h, sizes[:, None],
                                prep.activity[:, None])
    x[prep.window[v] < 0] = 0.0
    x[v] = 0.0
    return x


def interferer_collisions(prep: PreparedSite, v: int, channels: np.ndarray) -> np.ndarray:
    """Standalone per-hop collision probability of each fixed interferer, (K, N_v)."""
    k_count = len(prep.site.interferers)
    x = np.zeros((k_count, channels.size))
    for k, link in enumerate(prep.interferer_links[v]):
        lo, hi = prep.interferer_range[v, k]
        harm = ((channels >= lo) & (channels < hi)).astype(float)
        if link.overlap is None:
            x[k] = link.activity_fraction * harm
        else:
            x[k] = 1.0 - survival(link.overlap, link.activity_fraction * harm)
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


def _source_figures(prep: PreparedSite, v: int, x_sys: np.ndarray, x_itf: np.ndarray) -> tuple[SourceFigures, ...]:
    site = prep.site
    sys_mean, itf_mean = x_sys.mean(axis=1), x_itf.mean(axis=1)
    out = []
    for a, link in enumerate(prep.links[v]):
        if link is None:
            continue
        out.append(SourceFigures(source_id=site.systems[a].id, kind="system", link=link,
                                 window_channels=int(prep.window[v, a]), channel_range=None,
                                 collision_probability=float(sys_mean[a])))
    for k, link in enumerate(prep.interferer_links[v]):
        lo, hi = prep.interferer_range[v, k]
        out.append(SourceFigures(source_id=site.interferers[k].id, kind="interferer", link=link,
                                 window_channels=None, channel_range=(int(lo), int(hi)),
                                 collision_probability=float(itf_mean[k])))
    return tuple(out)


def _aligned_exact(prep: PreparedSite, v: int, channels: np.ndarray, x_sys: np.ndarray, sequences) -> None:
    """Replace the uniform figure of slot-aligned sources by the exact one when both sequences are known."""
    from cohop.sequences.analysis import aligned_channel_hits

    if sequences is None or sequences[v] is None:
        return
    for a, link in enumerate(prep.links[v]):
        if link is not None and link.aligned and sequences[a] is not None and prep.window[v, a] >= 0:
            x_sys[a] = aligned_channel_hits(prep, v, a, np.asarray(sequences[v]), np.asarray(sequences[a]), channels)


def assess_system(prep: PreparedSite, v: int, hop_sets: list[np.ndarray], origin: str, prefix: np.ndarray,
                  sizes: np.ndarray, detail: str = "channel", sequences=None, compliance: bool = True) -> SystemFigures:
    """System v's figures; `compliance` False skips the profile checks (they do not depend on coupling: the
    per-position figures of systems that move, `cohop.mobility`)."""
    system = prep.site.systems[v]
    channels = hop_sets[v]
    x_sys = system_collisions(prep, v, channels, prefix, sizes)
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
        sources=_source_figures(prep, v, x_sys, x_itf),
        channels=_channel_figures(prep, channels, total, hop_loss, x, ids, detail),
        compliance=tuple(findings), noise_floor_dbm=noise)


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
    prefix = channel_prefix_counts(prep, sets)
    sizes = np.array([s.size for s in sets])
    figures = tuple(assess_system(prep, v, sets, origins[v], prefix, sizes, detail, sequences)
                    for v in range(prep.n_systems))
    weights = np.array([s.priority_weight for s in prep.site.systems])
    rates = np.array([f.collision_probability for f in figures])
    worst = int(np.argmax(rates))
    notes = []
    if any(o == "whole band" for o in origins):
        notes.append("systems without a hop set were evaluated on every channel that fits their bandwidth")
    return Assessment(prepared=prep, systems=figures, detail=detail, weighted_collision=float(weights @ rates),
                      worst_collision=float(rates[worst]), worst_system=figures[worst].id, notes=tuple(notes))
