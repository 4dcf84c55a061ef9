"""The per-hop loss pieces of one victim, read from the assessment model (the one adapter to repoint when
the per-hop model changes).

`channel_losses` gives, per channel of the victim's hop set: each source system's standalone per-hop
collision probability under uniform hopping and random phase (`cohop.assess.system_collisions`, used for a
neighbour whose order is not known), each fixed interferer's (`cohop.assess.interferer_collisions`), and
the per-hop fade probability (`PreparedSite.fade_probability`). The traffic model then keeps what the
order fixes (which neighbour channel is near which hop, for a phase) and takes the rest from here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cohop.assess import channel_prefix_counts, interferer_collisions, system_collisions
from cohop.prepare import PreparedSite


@dataclass(frozen=True)
class ChannelLosses:
    channels: np.ndarray  # (N_v,) the victim's hop set (sorted grid indices)
    systems: np.ndarray  # (S, N_v) standalone per-hop collision probability of each source system
    interferers: np.ndarray  # (K, N_v) standalone per-hop collision probability of each fixed interferer
    fade_probability: float  # per hop

    def column(self, channel_per_hop: np.ndarray) -> np.ndarray:
        """Index into the N_v axis of each hop's channel."""
        return np.searchsorted(self.channels, channel_per_hop)


def channel_losses(prep: PreparedSite, hop_sets: list[np.ndarray], v: int) -> ChannelLosses:
    """The adapter: per-channel loss pieces of victim v on hop sets already resolved."""
    channels = np.unique(np.asarray(hop_sets[v], dtype=int))
    prefix = channel_prefix_counts(prep, hop_sets)
    sizes = np.array([np.asarray(h).size for h in hop_sets])
    return ChannelLosses(channels=channels, systems=system_collisions(prep, v, channels, prefix, sizes),
                         interferers=interferer_collisions(prep, v, channels),
                         fade_probability=float(prep.fade_probability[v]))
