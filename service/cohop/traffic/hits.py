"""Where the neighbours hit the victim along its hop order, for given phases.

Timing as in the sequence-driven simulation (`cohop.sequences.simulate`): the victim's packet on its hop t
occupies [t D_v, t D_v + T_v); source a's dwell m occupies [m D_a + phi, m D_a + phi + T_a) and is on
a's channel o_a(m mod L_a). With z = (t D_v - phi) / D_a the overlapping dwells are
m = floor(z - T_a / D_a) + 1 .. ceil(z + T_v / D_a) - 1 [der]. Of them, those whose channel lies within
the victim's harmful window of its channel o_v(t) are counted (running totals over a's period), and each
is active independently with a's activity: the hop survives a with probability (1 - alpha_a)^count [der].
A fixed relative phase is what makes the hits along the order correlated: a neighbour whose order keeps
stepping with the victim's hits it on the same hops every period.
"""

from __future__ import annotations

import numpy as np


def dwell_counts(order_v: np.ndarray, order_a: np.ndarray, width: int, hops: np.ndarray, phase_s: np.ndarray,
                 dwell_v_s: float, airtime_v_s: float, dwell_a_s: float, airtime_a_s: float,
                 rows: tuple[np.ndarray, np.ndarray] | None = None) -> np.ndarray:
    """(J, X) number of a's dwells overlapping v's packet on absolute hop `hops[j, x]` whose channel lies
    within `width` grid channels of v's, for a's phase `phase_s[j]` (seconds: a's dwell 0 starts there).
    `rows` ((D,) distinct channels of v, (J, X) index of each hop's channel among them) saves a search."""
    order_v, order_a = np.asarray(order_v), np.asarray(order_a)
    hops = np.asarray(hops, dtype=np.int64)
    size = order_a.size
    if rows is None:
        distinct, row = np.unique(order_v[hops % order_v.size], return_inverse=True)
        row = row.reshape(hops.shape)
    else:
        distinct, row = rows
    near = np.abs(order_a[None, :] - distinct[:, None]) <= width  # (D, L_a)
    totals = np.zeros((distinct.size, size + 1), dtype=np.int64)
    np.cumsum(near, axis=1, out=totals[:, 1:])
    z = (hops * dwell_v_s - np.asarray(phase_s, dtype=float)[:, None]) / dwell_a_s
    lo = np.floor(z - airtime_a_s / dwell_a_s).astype(np.int64) + 1
    hi = np.ceil(z + airtime_v_s / dwell_a_s).astype(np.int64) - 1
    count = np.maximum(hi - lo + 1, 0)
    r = row
    full, rest = count // size, count % size
    start = lo % size
    end = start + rest
    wrapped = end > size
    part = np.where(wrapped,
                    totals[r, size] - totals[r, start] + totals[r, np.where(wrapped, end - size, 0)],
                    totals[r, np.minimum(end, size)] - totals[r, start])
    return full * totals[r, size] + part


def survival_given_phase(counts: np.ndarray, activity: float) -> np.ndarray:
    """(1 - alpha)^count: the hop escapes every overlapping dwell of the source in its window [der]."""
    return (1.0 - activity) ** counts
