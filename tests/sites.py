"""Site builders for tests: request dicts in the service's own format."""

from __future__ import annotations

import copy

from cohop.site_rules import load_site

# A Bluetooth-like receiver (from memory): co-channel SIR 11 dB, rejection 11/41/51 dB at 1/2/3 MHz.
BT_REJECTION = [{"offset_hz": 1e6, "rejection_db": 11.0}, {"offset_hz": 2e6, "rejection_db": 41.0},
                {"offset_hz": 3e6, "rejection_db": 51.0}]


def system(sid: str, hop_set=None, **overrides) -> dict:
    s = {"id": sid, "tx_power_dbm": 0.0, "antenna_gain_dbi": 0.0, "bandwidth_hz": 1e6, "dwell_s": 625e-6,
         "packet_airtime_s": 625e-6, "activity_fraction": 1.0, "required_sir_db": 11.0,
         "rejection": copy.deepcopy(BT_REJECTION), "wanted_signal_dbm": -60.0, "fade_margin_db": 20.0,
         "retry_limit": 3}
    if hop_set is not None:
        s["hop_set"] = list(hop_set)
    s.update(overrides)
    return s


def site(systems: list[dict], coupling_loss_db: float | None = 60.0, interferers=None, n_channels: int = 79,
         **overrides) -> dict:
    """Custom 2.4 GHz band, 1 MHz grid of n_channels from 2402 MHz; all pairs coupled by one loss."""
    body = {"profile": "custom", "band": {"low_hz": 2400e6, "high_hz": 2402e6 + n_channels * 1e6},
            "grid": {"first_centre_hz": 2402e6, "spacing_hz": 1e6, "count": n_channels},
            "systems": systems, "interferers": interferers or []}
    if coupling_loss_db is not None:
        ids = [s["id"] for s in systems]
        body["coupling"] = {"entries": [{"from_system": a, "to_system": b, "loss_db": coupling_loss_db}
                                        for i, a in enumerate(ids) for b in ids[i + 1:]]}
    body.update(overrides)
    return body


def load(body: dict):
    return load_site(body)
