"""Where the neighbours hit the victim along its hop order, for given phases.

Timing as in the sequence-driven simulation (`cohop.sequences.simulate`): the victim's packet on its hop t
occupies [t D_v, t D_v + T_v); source a's dwell m occupies [m D_a + phi, m D_a + phi + T_a) and is on
a's channel o_a(m mod L_a). With z = (t D_v - phi) / D_a the overlapping dwells are
m = floor(z - T_a / D_a) + 1 .. ceil(z + T_v / D_a) - 1 [der]. Each of them is active independently with
a's activity and then destroys the hop with its harm rho at the offset |o_a(m) - o_v(t)| (`cohop.harm`,
`cohop.physics.capture`), so the hop survives a with probability prod over those dwells of
(1 - alpha_a rho) [der]. rho is constant on bands of offsets (`cohop.sequences.bands`), so the dwells are
counted per band (running totals over a's period within each band's width, by differences) and the
product is prod_g (1 - alpha_a rho_g)^(count_g); with fading "none" there is one band, rho 1 inside the
threshold window, and the survival is (1 - alpha_a)^count.
A fixed relative phase is what makes the hits along the order correlated: a neighbour whose order keeps
stepping with the victim's hits it on the same hops every period.
"""

from __future__ import annotations

import numpy as np

from cohop.sequences import bands


def band_counts(order_v: np.ndarray, order_a: np.ndarray, widths, hops: np.ndarray, phase_s: np.ndarray,
                dwell_v_s: float, airtime_v_s: float, dwell_a_s: float, airtime_a_s: float,
                rows: tuple[np.ndarray, np.ndarray] | None = None) -> np.ndarray:
    """(G, J, X) number of a's dwells overlapping v's packet on absolute hop `hops[j, x]` whose channel lies
    within widths[g] grid channels of v's (-1: none), for a's phase `phase_s[j]` (seconds: a's dwell 0 starts
    there). `rows` ((D,) distinct channels of v, (J, X) index of each hop's channel among them) saves a
    search."""
    order_v, order_a = np.asarray(order_v), np.asarray(order_a)
    widths = np.atleast_1d(np.asarray(widths, dtype=np.int64))
    hops = np.asarray(hops, dtype=np.int64)
    size = order_a.size
    if rows is None:
        distinct, row = np.unique(order_v[hops % order_v.size], return_inverse=True)
        row = row.reshape(hops.shape)
    else:
        distinct, row = rows
    offset = np.abs(order_a[None, :] - distinct[:, None])  # (D, L_a)
    z = (hops * dwell_v_s - np.asarray(phase_s, dtype=float)[:, None]) / dwell_a_s
    lo = np.floor(z - airtime_a_s / dwell_a_s).astype(np.int64) + 1
    hi = np.ceil(z + airtime_v_s / dwell_a_s).astype(np.int64) - 1
    count = np.maximum(hi - lo + 1, 0)
    r = row
    full, rest = count // size, count % size
    start = lo % size
    end = start + rest
    wrapped = end > size
    out = np.empty((widths.size,) + hops.shape, dtype=np.int64)
    totals = np.zeros((distinct.size, size + 1), dtype=np.int64)
    for g, width in enumerate(widths.tolist()):
        np.cumsum(offset <= width, axis=1, out=totals[:, 1:])
        part = np.where(wrapped,
                        totals[r, size] - totals[r, start] + totals[r, np.where(wrapped, end - size, 0)],
                        totals[r, np.minimum(end, size)] - totals[r, start])
        out[g] = full * totals[r, size] + part
    return out


def dwell_counts(order_v: np.ndarray, order_a: np.ndarray, width: int, hops: np.ndarray, phase_s: np.ndarray,
                 dwell_v_s: float, airtime_v_s: float, dwell_a_s: float, airtime_a_s: float,
                 rows: tuple[np.ndarray, np.ndarray] | None = None) -> np.ndarray:
    """(J, X) number of a's dwells overlapping v's packet on absolute hop `hops[j, x]` whose channel lies
    within `width` grid channels of v's (`band_counts` for one width)."""
    return band_counts(order_v, order_a, [width], hops, phase_s, dwell_v_s, airtime_v_s, dwell_a_s, airtime_a_s,
                       rows)[0]


def survival_given_phase(within: np.ndarray, hit: np.ndarray) -> np.ndarray:
    """prod_g (1 - hit_g)^(count_g): the hop escapes every overlapping dwell of the source [der]. `within`
    (G, ...) counts within each band's width (`band_counts` at `Bands.widths`), `hit` (G,) alpha rho_g."""
    hit = np.asarray(hit, dtype=float).reshape((-1,) + (1,) * (np.ndim(within) - 1))
    return bands.survival(bands.per_band(within), hit)
