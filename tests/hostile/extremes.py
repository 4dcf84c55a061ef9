"""Hypothesis strategies for sites whose every number lies at, or next to, a bound of `cohop.limits`.

The sites keep the cross-field rules most of the time (grid inside its band, airtime within the dwell,
offsets increasing), so that most of them are admitted and reach the arithmetic; where a choice breaks
one, the answer must be a 422, never a 5xx.
"""

from __future__ import annotations

import math

from hypothesis import strategies as st

from cohop import limits


def near(bound: limits.Bound, lo: float | None = None, hi: float | None = None):
    """A value at a bound, one ulp inside it, a hair inside it, or anywhere between (within [lo, hi])."""
    a = bound.minimum if lo is None else max(lo, bound.minimum)
    b = bound.maximum if hi is None else min(hi, bound.maximum)
    if a >= b:
        return st.just(a)
    if isinstance(bound.minimum, int) and isinstance(bound.maximum, int):
        return st.sampled_from(sorted({x for x in (int(a), int(a) + 1, int(b) - 1, int(b)) if a <= x <= b}))
    edges = [a, b, math.nextafter(a, b), math.nextafter(b, a), a + (b - a) * 1e-9, b - (b - a) * 1e-9]
    return st.one_of(st.sampled_from(edges), st.floats(a, b, allow_nan=False, allow_infinity=False))


@st.composite
def rejection(draw):
    n = draw(st.integers(1, 3))
    offsets = sorted({draw(near(limits.REJECTION_OFFSET_HZ)) for _ in range(n)})
    values = sorted(draw(near(limits.REJECTION_DB)) for _ in offsets)
    return [{"offset_hz": o, "rejection_db": r} for o, r in zip(offsets, values)]


@st.composite
def position(draw):
    return {"x_m": draw(near(limits.COORDINATE_M)), "y_m": draw(near(limits.COORDINATE_M)),
            "floor": draw(near(limits.FLOOR))}


@st.composite
def system(draw, sid: str, count: int, propagated: bool):
    dwell = draw(near(limits.DWELL_S))
    s = {"id": sid, "label": draw(st.text(max_size=20)),
         "tx_power_dbm": draw(near(limits.TX_POWER_DBM)), "antenna_gain_dbi": draw(near(limits.ANTENNA_GAIN_DBI)),
         "bandwidth_hz": draw(near(limits.BANDWIDTH_HZ)), "dwell_s": dwell,
         "packet_airtime_s": draw(near(limits.AIRTIME_S, hi=dwell)),
         "activity_fraction": draw(near(limits.FRACTION)), "required_sir_db": draw(near(limits.SIR_DB)),
         "rejection": draw(rejection()), "retry_limit": draw(near(limits.RETRY_LIMIT)),
         "hops_per_attempt": draw(near(limits.HOPS_PER_ATTEMPT)),
         "priority_weight": draw(near(limits.PRIORITY_WEIGHT)), "position": draw(position())}
    if propagated and draw(st.booleans()):
        s["link_distance_m"] = draw(near(limits.LINK_DISTANCE_M))
    else:
        s["wanted_signal_dbm"] = draw(near(limits.SIGNAL_DBM))
    if draw(st.booleans()):
        s["fade_margin_db"] = draw(near(limits.FADE_MARGIN_DB))
    else:
        s["sensitivity_dbm"] = draw(near(limits.SIGNAL_DBM))
    if draw(st.booleans()):
        s["noise_figure_db"] = draw(near(limits.NOISE_FIGURE_DB))
    model = draw(st.sampled_from(["rayleigh", "rician", "none"]))
    s["fading"] = {"model": model, **({"k_factor_db": draw(near(limits.K_FACTOR_DB))} if model == "rician" else {})}
    hops = draw(st.lists(st.integers(0, count - 1), min_size=1, max_size=12, unique=True))
    if draw(st.booleans()):
        s["hop_set"] = hops
    if draw(st.booleans()):
        s["sequence"] = draw(st.permutations(hops))
    return s


@st.composite
def propagation(draw):
    model = draw(st.sampled_from(["free_space", "log_distance", "p1238"]))
    p = {"model": model, "floor_height_m": draw(near(limits.FLOOR_HEIGHT_M)),
         "margin_db": draw(near(limits.PROPAGATION_MARGIN_DB))}
    if draw(st.booleans()):
        p["floor_loss_db"] = draw(near(limits.FLOOR_LOSS_DB))
    if model == "log_distance":
        p["exponent"] = draw(near(limits.PATH_LOSS_EXPONENT))
        p["reference_distance_m"] = draw(near(limits.REFERENCE_DISTANCE_M))
        if draw(st.booleans()):
            p["reference_loss_db"] = draw(near(limits.REFERENCE_LOSS_DB))
    if model == "p1238":
        p["power_loss_coefficient"] = draw(near(limits.POWER_LOSS_COEFFICIENT))
    return p


@st.composite
def interferer(draw, iid: str, low: float, high: float, ids: list[str], propagated: bool):
    f = near(limits.FREQUENCY_HZ, lo=low, hi=high)
    if draw(st.booleans()):
        a, b = sorted((draw(f), draw(f)))
        i = {"id": iid, "low_hz": a, "high_hz": b}
    else:
        i = {"id": iid, "centre_hz": draw(f), "width_hz": draw(near(limits.INTERFERER_WIDTH_HZ))}
    i["activity_fraction"] = draw(near(limits.FRACTION))
    if propagated and draw(st.booleans()):
        i.update(eirp_dbm=draw(near(limits.EIRP_DBM)), position=draw(position()))
    else:
        i["levels"] = [{"system": s, "level_dbm": draw(near(limits.SIGNAL_DBM))} for s in ids]
    if draw(st.booleans()):
        period = draw(near(limits.PERIOD_S))
        i.update(period_s=period, burst_s=draw(near(limits.BURST_S, hi=period)))
    return i


@st.composite
def survey(draw, low: float, high: float, ids: list[str]):
    n = draw(st.integers(2, 40))
    f0 = draw(near(limits.FREQUENCY_HZ, lo=low, hi=high))
    step = draw(st.sampled_from([1.0, 1e3, 1e6, (high - low) / n or 1.0]))
    freqs = [f0 + k * step for k in range(n)]
    if freqs[-1] > limits.FREQUENCY_HZ.maximum or len(set(freqs)) < n:
        freqs = [low + (high - low) * k / n for k in range(n)]
    sv = {"id": "sv", "frequencies_hz": freqs, "levels_dbm": [draw(near(limits.SURVEY_LEVEL_DBM)) for _ in freqs],
          "resolution_bandwidth_hz": draw(near(limits.RESOLUTION_BANDWIDTH_HZ)),
          "detection_margin_db": draw(near(limits.DETECTION_MARGIN_DB)),
          "noise_bandwidth_factor": draw(near(limits.NOISE_BANDWIDTH_FACTOR)), "applies_to": ids}
    if draw(st.booleans()):
        sv["occupancy_fraction"] = [draw(near(limits.FRACTION)) for _ in freqs]
    return sv


@st.composite
def grid(draw):
    """(band, grid) of a custom profile: a band at either end of the spectrum, a grid that fits in it."""
    count = draw(st.sampled_from([1, 2, 79, 4096, limits.MAX_CHANNELS]))
    spacing = draw(near(limits.CHANNEL_SPACING_HZ, hi=limits.FREQUENCY_HZ.maximum / (count + 2)))
    low = draw(near(limits.FREQUENCY_HZ, hi=limits.FREQUENCY_HZ.maximum - spacing * (count + 1)))
    first = low + spacing / 2
    high = min(limits.FREQUENCY_HZ.maximum, first + spacing * count)
    return {"low_hz": low, "high_hz": high}, {"first_centre_hz": first, "spacing_hz": spacing, "count": count}


@st.composite
def assessment(draw):
    band, g = draw(grid())
    propagated = draw(st.booleans())
    ids = [f"s{i}" for i in range(draw(st.integers(1, 3)))]
    systems = [draw(system(sid, g["count"], propagated)) for sid in ids]
    site = {"profile": "custom", "band": band, "grid": g, "systems": systems,
            "rms_delay_spread_s": draw(near(limits.DELAY_SPREAD_S))}
    entries = [{"from_system": a, "to_system": b, "loss_db": draw(near(limits.COUPLING_LOSS_DB))}
               for i, a in enumerate(ids) for b in ids[i + 1:]]
    site["coupling"] = {"propagation": draw(propagation())} if propagated else {"entries": entries}
    site["interferers"] = [draw(interferer(f"i{k}", band["low_hz"], band["high_hz"], ids, propagated))
                           for k in range(draw(st.integers(0, 2)))]
    if draw(st.booleans()):
        site["surveys"] = [draw(survey(band["low_hz"], band["high_hz"], ids))]
    body = {"site": site, "detail": draw(st.sampled_from(["system", "channel", "source"]))}
    if draw(st.booleans()):
        body["simulation"] = {"trials_per_system": limits.TRIALS_PER_SYSTEM.minimum,
                              "seed": draw(near(limits.SIMULATION_SEED))}
    return body


def corner_site(end: str) -> dict:
    """A site (custom profile, two systems, a bursty interferer, a survey, propagation) with every number
    at its minimum (end="minimum") or at its maximum (end="maximum"), where the cross-field rules allow."""
    def at(bound: limits.Bound):
        return getattr(bound, end)

    spacing = at(limits.CHANNEL_SPACING_HZ)
    bandwidth = min(at(limits.BANDWIDTH_HZ), spacing)
    count = 4
    if end == "minimum":
        low = limits.FREQUENCY_HZ.minimum
    else:
        low = limits.FREQUENCY_HZ.maximum - spacing * (count + 1)
    first = low + spacing / 2 + bandwidth / 2
    band = {"low_hz": low, "high_hz": first + spacing * count}
    position = {"x_m": at(limits.COORDINATE_M), "y_m": at(limits.COORDINATE_M), "floor": at(limits.FLOOR)}

    def system(sid, **extra):
        return {"id": sid, "label": "x" * limits.MAX_TEXT_CHARS, "tx_power_dbm": at(limits.TX_POWER_DBM),
                "antenna_gain_dbi": at(limits.ANTENNA_GAIN_DBI), "bandwidth_hz": bandwidth,
                "dwell_s": at(limits.DWELL_S), "packet_airtime_s": at(limits.AIRTIME_S),
                "activity_fraction": at(limits.FRACTION), "required_sir_db": at(limits.SIR_DB),
                "rejection": [{"offset_hz": at(limits.REJECTION_OFFSET_HZ), "rejection_db": at(limits.REJECTION_DB)}],
                "fade_margin_db": at(limits.FADE_MARGIN_DB), "noise_figure_db": at(limits.NOISE_FIGURE_DB),
                "fading": {"model": "rician", "k_factor_db": at(limits.K_FACTOR_DB)},
                "retry_limit": at(limits.RETRY_LIMIT), "hops_per_attempt": at(limits.HOPS_PER_ATTEMPT),
                "priority_weight": at(limits.PRIORITY_WEIGHT), "position": dict(position),
                "hop_set": [0, 1, 2, 3], "sequence": [2, 0, 3, 1], **extra}

    systems = [system("a", wanted_signal_dbm=at(limits.SIGNAL_DBM)),
               system("b", link_distance_m=at(limits.LINK_DISTANCE_M))]
    systems[1]["position"]["x_m"] = -position["x_m"]
    interferer = {"id": "i", "centre_hz": first + spacing, "width_hz": at(limits.INTERFERER_WIDTH_HZ),
                  "activity_fraction": at(limits.FRACTION), "burst_s": at(limits.BURST_S),
                  "period_s": at(limits.PERIOD_S), "eirp_dbm": at(limits.EIRP_DBM), "position": dict(position)}
    freqs = [first + spacing * k / 2 for k in range(2 * count)]
    survey = {"id": "sv", "applies_to": ["a"], "frequencies_hz": freqs,
              "levels_dbm": [at(limits.SURVEY_LEVEL_DBM)] * len(freqs),
              "occupancy_fraction": [at(limits.FRACTION)] * len(freqs),
              "resolution_bandwidth_hz": at(limits.RESOLUTION_BANDWIDTH_HZ),
              "detection_margin_db": at(limits.DETECTION_MARGIN_DB),
              "noise_bandwidth_factor": at(limits.NOISE_BANDWIDTH_FACTOR)}
    propagation = {"model": "log_distance", "exponent": at(limits.PATH_LOSS_EXPONENT),
                   "reference_distance_m": at(limits.REFERENCE_DISTANCE_M),
                   "reference_loss_db": at(limits.REFERENCE_LOSS_DB), "floor_loss_db": at(limits.FLOOR_LOSS_DB),
                   "floor_height_m": at(limits.FLOOR_HEIGHT_M), "margin_db": at(limits.PROPAGATION_MARGIN_DB)}
    return {"name": "n" * limits.MAX_TEXT_CHARS, "profile": "custom", "band": band,
            "grid": {"first_centre_hz": first, "spacing_hz": spacing, "count": count}, "systems": systems,
            "coupling": {"propagation": propagation, "entries": [
                {"from_system": "a", "to_system": "b", "loss_db": at(limits.COUPLING_LOSS_DB)}]},
            "interferers": [interferer], "surveys": [survey], "rms_delay_spread_s": at(limits.DELAY_SPREAD_S)}
