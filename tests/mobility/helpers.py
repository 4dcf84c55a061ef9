"""Small moving-system sites for the mobility tests: free-space coupling (ITU-R P.525) on a 2.4 GHz grid."""

from __future__ import annotations

import math

from tests import sites

#: Grid mid frequency of `sites.site(..., n_channels=N)`: channels 2402 + k MHz, k < N.
def mid_frequency_hz(n_channels: int) -> float:
    return 2402e6 + (n_channels - 1) * 1e6 / 2


def p525_loss_db(f_hz: float, d_m: float) -> float:
    """ITU-R P.525 eq. (4) with its printed constant: 32.45 + 20 log10(f / MHz) + 20 log10(d / km)."""
    return 32.45 + 20 * math.log10(f_hz / 1e6) + 20 * math.log10(d_m / 1e3)


def at(x: float, y: float = 0.0, floor: int = 0) -> dict:
    return {"x_m": x, "y_m": y, "floor": floor}


def moving_site(victim_places: list[dict], source_place: dict, policy: str = "worst", n_channels: int = 20,
                margin_db: float = 0.0, **victim_fields) -> dict:
    """A victim that moves (positions) and one fixed source, all channels shared, coupling from positions."""
    victim = sites.system("crane", positions=victim_places, **victim_fields)
    source = sites.system("agv", position=source_place, tx_power_dbm=10.0)
    body = sites.site([victim, source], coupling_loss_db=None, n_channels=n_channels,
                      mobility_policy=policy)
    body["coupling"] = {"propagation": {"model": "free_space", "margin_db": margin_db}}
    return body
