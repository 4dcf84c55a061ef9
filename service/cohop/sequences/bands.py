"""Soft harm by channel offset as bands, for the figures that count a source's dwells near a victim's channel.

The harm rho of one overlapped transmission of source a at victim v (`cohop.harm`, from
`cohop.physics.capture`) depends on the channel offset d only through the step of v's rejection table d
falls in, so over d = 0, 1, ... it is piecewise constant and 0 beyond `prep.harm.reach[v, a]`. Its runs
of equal harm are the *bands* of the pair: band g holds the offsets w_(g-1) < d <= w_g (w_0 = -1) and
harm rho_g. Whatever counts a's dwells within a width of v's channel (running totals along an order, the
offset classes of slot-aligned orders) therefore counts them per band by differences of the counts at
the widths w_g, and the hop survives n_g overlapped dwells in each band, each transmitting with a's
activity alpha, with probability

    prod_g (1 - alpha rho_g)^(n_g)

(one factor per overlapped transmission; exact for a Rayleigh-faded wanted signal, see capture.py). With
fading "none" a pair has one band, rho = 1 out to its threshold window `prep.window[v, a]`: the old
count and (1 - alpha)^count, bit for bit.

`subset_survival` is the same survival when the overlapped dwells are a random set of distinct positions
of a's period (the distinct-channel model of `cohop.stats.overlap`), with the harmful positions split by
band.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cohop.prepare import PreparedSite
from cohop.stats.overlap import distinct_survival_weighted, near_symmetric, survival_distinct


@dataclass(frozen=True)
class Bands:
    """The bands of victim v against each of some sources, padded to one width G: a padded band repeats the
    source's last width (so it counts nothing) with harm 0; a source without harm has width -1."""

    widths: np.ndarray  # (A, G) int: outermost offset of each band, ascending along G
    harm: np.ndarray  # (A, G) float: rho of one transmission in each band

    @property
    def count(self) -> int:
        return self.widths.shape[1]

    @property
    def reach(self) -> np.ndarray:
        """(A,) the largest offset with harm (-1: none)."""
        return self.widths[:, -1]

    def hit(self, activity) -> np.ndarray:
        """(A, G) alpha rho_g: one overlapped dwell in band g destroys the hop with this probability."""
        return np.asarray(activity, dtype=float).reshape(-1, 1) * self.harm


def harm_by_offset(prep: PreparedSite, v: int) -> np.ndarray:
    """(S, C) rho[a, d] of one transmission of each system a at grid offset d from victim v's channel."""
    return prep.harm.system_harm(v, np.arange(prep.n_channels))


def bands_of(rows: np.ndarray) -> Bands:
    """The bands of rows of harm by offset (A, C), as `Bands`."""
    rows = np.atleast_2d(np.asarray(rows, dtype=float))
    found = []
    for row in rows:
        on = np.flatnonzero(row > 0)
        if not on.size:
            found.append((np.array([-1]), np.array([0.0])))
            continue
        r = row[:on[-1] + 1]
        ends = np.flatnonzero(np.r_[r[1:] != r[:-1], True])  # the last offset of each run of equal harm
        found.append((ends, r[ends]))
    g = max(e.size for e, _ in found)
    widths = np.array([np.pad(e, (0, g - e.size), mode="edge") for e, _ in found], dtype=np.int64)
    harm = np.array([np.pad(h, (0, g - h.size)) for _, h in found])
    return Bands(widths=widths.reshape(rows.shape[0], g), harm=harm.reshape(rows.shape[0], g))


def system_bands(prep: PreparedSite, v: int, sources) -> Bands:
    """Victim v's bands against each system in `sources`."""
    return bands_of(harm_by_offset(prep, v)[np.asarray(sources, dtype=np.int64)])


def per_band(within: np.ndarray) -> np.ndarray:
    """Counts per band (G, ...) from counts within each band's outer width (G, ...): their differences."""
    within = np.asarray(within)
    return np.diff(within, axis=0, prepend=np.zeros((1,) + within.shape[1:], dtype=within.dtype))


def survival(counts: np.ndarray, hit: np.ndarray) -> np.ndarray:
    """prod_g (1 - hit_g)^(counts_g): the hop escapes every overlapped dwell; counts (G, ...), hit (G, ...)
    broadcasting against them."""
    counts = np.asarray(counts)
    hit = np.asarray(hit, dtype=float)
    out = (1.0 - hit[0]) ** counts[0]
    for g in range(1, counts.shape[0]):
        out = out * (1.0 - hit[g]) ** counts[g]
    return out


# --- distinct positions ----------------------------------------------------------------------------------

def subset_work(counts: np.ndarray, drawn: np.ndarray) -> int:
    """Element steps `subset_survival` takes for these rows (to bound it beforehand)."""
    counts = np.asarray(counts, dtype=np.int64)
    most = int(np.minimum(counts.sum(axis=-1), drawn).max(initial=0))
    return counts.shape[0] * (most + 1) * int(np.minimum(counts.max(axis=0, initial=0), most).sum() + counts.shape[1])


def subset_survival(k0, r, counts, hit, size) -> np.ndarray:
    """E over K in {k0, k0 + 1} (P(K = k0 + 1) = r) of the chance that K overlapped dwells on distinct positions
    of the source's period spare the hop, per row p: the period has size[p] positions, counts[p, g] of them
    in band g, where one transmitting dwell destroys the hop with hit[p, g] (alpha rho_g). K = q N + m covers
    every position q times and a random m-subset once (`cohop.stats.overlap`): survival
    prod_g (1 - hit_g)^(q n_g) times E[prod over the m-subset], the number J of harmful positions drawn
    hypergeometric and the J split over the bands as a random J-subset of them: the elementary symmetric
    form of `cohop.stats.overlap.distinct_survival_weighted`, the one place the law is written.

    Rows whose harm sits in one band take `cohop.stats.overlap.survival_distinct` itself (so a single
    band, as with fading "none", gives its figures exactly). counts, hit (P, G); k0, r, size (P,)."""
    counts = np.asarray(counts, dtype=np.int64)
    hit = np.asarray(hit, dtype=float)
    p_rows, g_count = counts.shape
    k0 = np.broadcast_to(np.asarray(k0, dtype=np.int64), (p_rows,))
    r = np.broadcast_to(np.asarray(r, dtype=float), (p_rows,))
    size = np.maximum(np.broadcast_to(np.asarray(size, dtype=np.int64), (p_rows,)), 1)
    active = (counts > 0) & (hit > 0)
    single = active.sum(axis=1) <= 1
    first = np.argmax(active, axis=1)  # the active band (band 0 when none is)
    rows = np.arange(p_rows)
    out = np.empty(p_rows)
    if single.any():
        out[single] = survival_distinct(k0[single], r[single], counts[rows, first][single], size[single],
                                        hit[rows, first][single])
    several = np.flatnonzero(~single)
    if several.size:  # the weighted law of cohop.stats.overlap, the harmful positions grouped by band
        c, keep, n = counts[several], 1.0 - hit[several], size[several]
        h = c.sum(axis=1)
        most = int(np.minimum(h, np.minimum(k0[several] + 1, n - 1)).max(initial=0))
        e = near_symmetric(list(c.T), list(keep.T), max(most, 0))
        whole = np.prod(keep ** c, axis=1)
        out[several] = sum(weight * distinct_survival_weighted(kk, e, h, whole, n - h, 1.0, n)
                           for kk, weight in ((k0[several], 1.0 - r[several]), (k0[several] + 1, r[several])))
    return out
