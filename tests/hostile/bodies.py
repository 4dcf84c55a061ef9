"""Request bodies for the hostile corpus: the embedded samples, small generated sites, and edits of them.

Every builder returns a fresh dict (or bytes, for bodies that are not JSON); the corpus encodes dicts
with `encode`. Plans and re-plans get small time limits and few simulated packets so the corpus runs fast.
"""

from __future__ import annotations

import copy
import json

from cohop import limits, samples
from tests import sites

FAST_SEARCH = {"time_limit_s": 0.2, "sequence_packets": 1000}


def encode(body) -> bytes:
    return json.dumps(body, allow_nan=False).encode()


def assessment() -> dict:
    return copy.deepcopy(samples.load("water_works"))


def plan() -> dict:
    body = copy.deepcopy(samples.load("container_terminal"))
    body["search"] = dict(FAST_SEARCH)
    return body


def replan() -> dict:
    body = copy.deepcopy(samples.load("water_works_replan"))
    body["search"] = dict(FAST_SEARCH)
    return body


def edited(base, *edits) -> dict:
    """`base()` with each edit (a function of the body) applied."""
    body = base()
    for edit in edits:
        edit(body)
    return body


def system_field(i: int, **values):
    def edit(body):
        body["site"]["systems"][i].update(values)
    return edit


def site_field(**values):
    def edit(body):
        body["site"].update(values)
    return edit


def small_site(n_systems: int = 2, n_channels: int = 79, **system_fields) -> dict:
    """Bluetooth-like systems on a custom 1 MHz grid, every pair coupled at 60 dB (tests/sites.py)."""
    systems = [sites.system(f"s{i}", range(min(n_channels, 20)), **system_fields) for i in range(n_systems)]
    return sites.site(systems, n_channels=n_channels)


def many_systems(n: int) -> dict:
    """n systems placed on a line, coupled by free-space propagation (no entry per pair)."""
    systems = [sites.system(f"s{i}", range(i % 70, i % 70 + 8), position={"x_m": 10.0 * i, "y_m": 0.0})
               for i in range(n)]
    body = sites.site(systems, coupling_loss_db=None)
    body["coupling"] = {"propagation": {"model": "free_space"}}
    return {"site": body, "detail": "system"}


def rician_systems(n: int, k_factor_db: float) -> dict:
    """`many_systems` with every wanted signal Rician-faded: the joint law at every victim (`cohop.joint`)."""
    body = many_systems(n)
    for system in body["site"]["systems"]:
        system["fading"] = {"model": "rician", "k_factor_db": k_factor_db}
    return body


def interferers(n: int) -> dict:
    site = small_site()
    site["interferers"] = [{"id": f"i{k}", "low_hz": 2402e6 + k * 1e5, "high_hz": 2402.1e6 + k * 1e5,
                            "levels": [{"system": "s0", "level_dbm": -80.0}, {"system": "s1", "level_dbm": -80.0}],
                            "burst_s": 1e-3, "period_s": 1e-2} for k in range(n)]
    return {"site": site}


def rejection_rows(n: int) -> dict:
    site = small_site()
    site["systems"][0]["rejection"] = [{"offset_hz": 1e6 * (k + 1), "rejection_db": min(200.0, 10.0 + k)}
                                       for k in range(n)]
    return {"site": site}


def survey(points: int, surveys: int = 1, spike_every: int = 997) -> dict:
    """Traces over 2400-2483 MHz at -100 dBm with a -70 dBm spike every `spike_every` points."""
    site = small_site()
    step = 83e6 / points
    freqs = [2400e6 + k * step for k in range(points)]
    levels = [-70.0 if k % spike_every == 0 else -100.0 for k in range(points)]
    site["surveys"] = [{"id": f"sv{j}", "applies_to": ["s0"], "frequencies_hz": freqs, "levels_dbm": levels,
                        "resolution_bandwidth_hz": 1e3} for j in range(surveys)]
    return {"site": site}


def hop_set_flood(lists: int) -> bytes:
    """A hop set holding `lists` one-element lists (the 13 MB body of the issue)."""
    text = json.dumps(assessment())
    return text.replace('"hop_set": [0, 1, 2', '"hop_set": [' + "[0]," * lists + "0, 1, 2", 1).encode()


def error_flood(systems: int = limits.MAX_SYSTEMS, per_list: int = limits.MAX_CHANNELS) -> dict:
    """Every system's hop set full of strings: far more field errors than an answer lists."""
    site = many_systems(systems)["site"]
    for s in site["systems"]:
        s["hop_set"] = ["x"] * per_list
    return {"site": site}


def unknown_flood(keys: int) -> dict:
    body = assessment()
    body["site"]["systems"][0].update({f"k{i}": i for i in range(keys)})
    return body


def padded(size: int) -> bytes:
    """The sample assessment padded with trailing whitespace to exactly `size` bytes."""
    raw = encode(assessment())
    return raw + b" " * (size - len(raw))


def deep(depth: int, field: str = "label") -> bytes:
    body = assessment()
    body["site"]["systems"][0][field] = "@"
    return encode(body).replace(b'"@"', b"[" * depth + b"]" * depth, 1)


def replace_number(base, needle: str, token: str) -> bytes:
    """The body of `base()` with the first number after `needle` replaced by a raw token (NaN, 1e309...)."""
    text = json.dumps(base())
    start = text.index(needle) + len(needle)
    end = start
    while text[end] not in ",}]":
        end += 1
    return (text[:start] + " " + token + text[end:]).encode()
