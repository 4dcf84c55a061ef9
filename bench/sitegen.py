"""Seeded generator of realistic plant sites (demo data of our own, for benchmarks).

A site is a plant of a few hundred metres to a few kilometres across with
a mix of system types: SCADA/telemetry masters, wireless sensor networks,
crane and machine remote controls, and vehicle links, each with powers,
bandwidths, dwell times and traffic typical of its kind (common practice,
not measured data). Coupling comes from positions with a log-distance model
(n = 2.4, 6 dB planning margin); a few fixed interferers (wideband video
senders, bursty RFID-like readers, a neighbour's gateway) sit around the site.
"""

from __future__ import annotations

import random

SIZES = {
    # name: (systems, channels, spacing_hz, first_centre_hz, channels per system)
    "small": (5, 50, 500e3, 902.25e6, 20),
    "medium": (15, 260, 100e3, 902.05e6, 50),
    "large": (50, 1040, 25e3, 902.0125e6, 50),
}

KINDS = (
    # kind, tx dBm, gain dBi, dwell s, airtime share of dwell, activity, SIR dB, retries, weight, hops/attempt
    ("telemetry", 30.0, 6.0, 0.05, 0.3, 0.5, 12.0, 3, 3.0, 1),
    ("sensors", 20.0, 2.0, 0.1, 0.08, 0.15, 9.0, 4, 1.0, 1),
    ("crane", 10.0, 0.0, 0.02, 0.2, 1.0, 10.0, 1, 8.0, 2),
    ("vehicle", 27.0, 3.0, 0.04, 0.25, 0.6, 12.0, 2, 4.0, 1),
)


def _rejection(spacing_hz: float, bandwidth_hz: float) -> list[dict]:
    """A receiver that rejects 30 dB one bandwidth away, 50 dB at two, 60 dB at three, 70 dB at ten."""
    step = max(bandwidth_hz, spacing_hz)
    return [{"offset_hz": k * step, "rejection_db": r} for k, r in ((1, 30.0), (2, 50.0), (3, 60.0), (10, 70.0))]


#: Radios of different systems are at least this far apart (separate buildings, masts or bays).
MIN_SEPARATION_M = 40.0


def _positions(rng: random.Random, n: int, extent: float) -> list[tuple[float, float]]:
    out: list[tuple[float, float]] = []
    while len(out) < n:
        p = (rng.uniform(0, extent), rng.uniform(0, extent))
        if all((p[0] - q[0]) ** 2 + (p[1] - q[1]) ** 2 >= MIN_SEPARATION_M**2 for q in out):
            out.append(p)
    return out


def generate(size: str = "medium", seed: int = 0, with_hop_sets: bool = True) -> dict:
    """A site request body. Hop sets (if asked) are random, as if installed independently."""
    n_sys, n_ch, spacing, first, per_system = SIZES[size]
    rng = random.Random(f"{size}:{seed}")
    extent = 300.0 + 40.0 * n_sys
    bandwidth = min(0.8 * spacing, 200e3)
    systems = []
    spots = _positions(rng, n_sys, extent)
    for i in range(n_sys):
        kind, tx, gain, dwell, share, act, sir, retries, weight, hops = KINDS[i % len(KINDS)]
        s = {"id": f"{kind}-{i:02d}", "label": f"{kind} network {i}", "tx_power_dbm": tx + rng.uniform(-3, 0),
             "antenna_gain_dbi": gain, "bandwidth_hz": bandwidth, "dwell_s": dwell,
             "packet_airtime_s": dwell * share, "activity_fraction": act * rng.uniform(0.6, 1.0),
             "required_sir_db": sir, "rejection": _rejection(spacing, bandwidth),
             "wanted_signal_dbm": rng.uniform(-90.0, -65.0), "fade_margin_db": rng.uniform(12.0, 25.0),
             "retry_limit": retries, "priority_weight": weight, "hops_per_attempt": hops,
             "position": {"x_m": spots[i][0], "y_m": spots[i][1]}}
        if with_hop_sets:
            s["hop_set"] = sorted(rng.sample(range(n_ch), per_system))
        systems.append(s)
    low = first - spacing / 2
    span = n_ch * spacing
    interferers = [
        {"id": "video-1", "label": "wideband video sender", "low_hz": low + 0.6 * span,
         "high_hz": low + 0.6 * span + min(0.1 * span, 3e6), "activity_fraction": 1.0, "eirp_dbm": 17.0,
         "position": {"x_m": rng.uniform(0, extent), "y_m": -50.0}},
        {"id": "reader-1", "label": "bursty reader", "centre_hz": low + 0.25 * span, "width_hz": 4 * spacing,
         "activity_fraction": 0.4, "burst_s": 0.1, "period_s": 1.0, "eirp_dbm": 30.0,
         "position": {"x_m": rng.uniform(0, extent), "y_m": rng.uniform(0, extent)}},
        {"id": "gateway-1", "label": "neighbour's gateway", "low_hz": low + 0.05 * span,
         "high_hz": low + 0.05 * span + 8 * spacing, "activity_fraction": 0.3, "eirp_dbm": 27.0,
         "position": {"x_m": extent + 400.0, "y_m": extent / 2}},
    ]
    return {
        "name": f"generated {size} site (seed {seed})", "profile": "custom",
        "band": {"low_hz": low, "high_hz": low + span},
        "grid": {"first_centre_hz": first, "spacing_hz": spacing, "count": n_ch},
        "systems": systems,
        "coupling": {"propagation": {"model": "log_distance", "exponent": 2.4, "reference_distance_m": 1.0,
                                     "margin_db": 6.0}},
        "interferers": interferers,
    }


def scaled(systems: int, channels: int, seed: int = 0, per_system: int | None = None) -> dict:
    """A medium-like site with other counts (for scaling runs)."""
    body = generate("medium", seed)
    spacing = 26e6 / channels
    first = 902e6 + spacing / 2
    rng = random.Random(f"scaled:{systems}:{channels}:{seed}")
    per = per_system or max(1, min(channels, channels // 5))
    template = body["systems"]
    spots = _positions(rng, systems, 300.0 + 40.0 * systems)
    out = []
    for i in range(systems):
        s = dict(template[i % len(template)])
        s["id"] = f"sys-{i:03d}"
        s["bandwidth_hz"] = 0.8 * spacing
        s["rejection"] = _rejection(spacing, 0.8 * spacing)
        s["position"] = {"x_m": spots[i][0], "y_m": spots[i][1]}
        s["hop_set"] = sorted(rng.sample(range(channels), per))
        out.append(s)
    body.update(systems=out, grid={"first_centre_hz": first, "spacing_hz": spacing, "count": channels},
                band={"low_hz": 902e6, "high_hz": 928e6}, name=f"scaled {systems}x{channels}")
    for itf in body["interferers"]:
        if "width_hz" in itf:
            itf["width_hz"] = 4 * spacing
    return body
