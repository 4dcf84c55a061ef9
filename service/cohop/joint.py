"""The joint law at victims whose wanted signal is Rician-faded: every overlapped transmission together.

With a Rayleigh-faded (or no) wanted signal, a hop's survival against several
transmissions is the product of one factor per transmission, which is how
`cohop.assess` combines them. With a Rician-faded one it is not [Zorzi 1997,
`cohop.physics.capture`]: the interference powers add before they meet the
wanted signal, and the product understates the loss. Here the survival is
computed jointly, as a linear functional of the probability generating
function G(u) = E[prod_j ell_j(u)] over the transmissions present
(`capture.joint_contour`): at each point u of the victim's contour the same
several-dwell law as the product case is evaluated with the factor
1 - alpha (1 - ell_j(u)) in place of 1 - alpha rho_j (complex), for each
source system (`assess.survivals_of`), each slot-aligned source with a known
order (`sequences.analysis.aligned_channel_hits`) and each fixed interferer
(`assess.interferer_collisions`); sources are independent, so G of all of
them is the product of theirs at every point.

Reported figures, conditional on the noise letting the hop through as in the
product case: the standalone figure of a source is 1 - success(G_source) /
success(1), and the hop's collision 1 - success(prod G) / success(1); they
no longer combine as 1 - prod(1 - x) (the joint figure is at least that).
A victim whose K-factor needs more than `capture.JOINT_MAX_TERMS` terms, or
whose noise alone destroys nearly every hop, keeps the product and the
answer's assumptions say so.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cohop.physics import capture
from cohop.prepare import PreparedSite


@dataclass(frozen=True)
class JointFigures:
    """Victim v's per-hop figures on its hop-set channels under the joint law."""

    systems: np.ndarray  # (S, N) standalone collision of each source system (0 for v itself)
    interferers: np.ndarray  # (K, N) standalone collision of each fixed interferer
    total: np.ndarray  # (N,) collision with every source together


def contour_of(prep: PreparedSite, v: int) -> capture.JointContour | None:
    """Victim v's contour when the joint law applies to it (a Rician wanted signal within the limits), else
    None."""
    fading = prep.site.systems[v].fading
    if fading.model != "rician":
        return None
    return capture.joint_contour(fading.k_factor_db, float(prep.fade_margin_db[v]))


def points(prep: PreparedSite, v: int) -> int:
    """Evaluations of v's row the joint law takes (0 when it does not apply): for the work cap."""
    contour = contour_of(prep, v)
    return 0 if contour is None else contour.points.size


def joint_figures(prep: PreparedSite, v: int, channels: np.ndarray, occupancy: np.ndarray, sizes: np.ndarray,
                  sequences=None, contour: capture.JointContour | None = None) -> JointFigures | None:
    """Victim v's figures under the joint law (module docstring), or None when it does not apply."""
    from cohop.assess import interferer_collisions, victim_survivals

    contour = contour or contour_of(prep, v)
    if contour is None:
        return None
    victim = prep.site.systems[v]
    channels = np.asarray(channels, dtype=int)
    sys_t, itf_t = prep.harm.transforms(victim, v, contour)  # (P, S, L), (P, K, L)
    g_sys = np.moveaxis(victim_survivals(prep, v, channels, occupancy, sizes, sys_t), 0, -1)  # (S, N, P)
    g_itf = np.empty((len(prep.site.interferers), channels.size, contour.points.size), dtype=complex)
    for i in range(contour.points.size):
        _aligned(prep, v, channels, g_sys[:, :, i], sequences, sys_t[i])
        g_itf[:, :, i] = 1.0 - interferer_collisions(prep, v, channels, itf_t[i])

    def collision(g):  # 0 exactly where nothing harms at any point (rounding would leave ~1e-16)
        x = np.clip(1.0 - contour.success(g) / contour.base, 0.0, 1.0)
        return np.where(np.all(g == 1.0, axis=-1), 0.0, x)

    every = np.prod(g_sys, axis=0) * np.prod(g_itf, axis=0)
    x_sys = collision(g_sys)
    x_sys[v] = 0.0
    return JointFigures(systems=x_sys, interferers=collision(g_itf), total=collision(every))


def _aligned(prep: PreparedSite, v: int, channels: np.ndarray, g: np.ndarray, sequences, sys_t: np.ndarray):
    """Slot-aligned sources with known orders, exactly (as `assess._aligned_exact`), at one point."""
    from cohop.sequences.analysis import aligned_channel_hits

    if sequences is None or sequences[v] is None:
        return
    for a, link in enumerate(prep.links[v]):
        if link is not None and link.aligned and sequences[a] is not None and prep.harm.reach[v, a] >= 0:
            values = sys_t[a][prep.harm.steps[v]]
            g[a] = 1.0 - aligned_channel_hits(prep, v, a, np.asarray(sequences[v]), np.asarray(sequences[a]),
                                              channels, values)
