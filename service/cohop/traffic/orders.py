"""The hop orders the traffic figures walk along: each system's own (given in the request), else the order
the service would build for its hop set (`cohop.sequences.construct.build_sequences`)."""

from __future__ import annotations

import numpy as np

from cohop.prepare import PreparedSite
from cohop.sequences.construct import build_sequences
from cohop.sequences.report import delay_spread


def traffic_orders(prep: PreparedSite, hop_sets: list[np.ndarray], seed: int = 0,
                   built=None) -> tuple[list[np.ndarray], list[str]]:
    """(one order per system, where each came from: "request" or "planned"). `built` (a list of orders, one
    per system) is used instead of building when the caller already has them."""
    given = [None if s.sequence is None else np.asarray(s.sequence, dtype=np.int64) for s in prep.site.systems]
    if all(g is not None for g in given):
        return given, ["request"] * len(given)
    if built is None:
        built = [q.channels for q in build_sequences(prep, hop_sets, seed, delay_spread(prep))[0]]
    orders = [g if g is not None else np.asarray(b, dtype=np.int64) for g, b in zip(given, built)]
    return orders, ["request" if g is not None else "planned" for g in given]
