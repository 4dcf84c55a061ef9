"""Cautions every response carries, and the model's stated assumptions."""

from __future__ import annotations

CAUTIONS = (
    "Planning estimate: these figures are predictions from the models and inputs given, not measurements.",
    "Confirm any plan with a site survey before reconfiguring radios: interference with plant radio links "
    "can endanger people and equipment.",
    "Local regulations, the regulator's current text and licensed practice prevail over the profile checks "
    "here; the operator is responsible for compliance.",
)

COORDINATION_CAUTION = (
    "47 CFR 15.247(h) does not permit coordinating frequency-hopping systems for the express purpose of "
    "avoiding simultaneous occupancy of individual hopping frequencies by multiple transmitters; hop sets "
    "assigned jointly to independent systems may be read as such coordination. Ask the regulator or "
    "qualified counsel, and prefer plans in which each system only avoids the occupancy it measures."
)

MODEL_ASSUMPTIONS = (
    "Each system hops uniformly over its hop set; one burst of packet_airtime_s at the start of a share "
    "activity_fraction of its dwells.",
    "Systems are unsynchronised (random phase) unless they share a time_base_group, which means slot-aligned "
    "dwells.",
    "Adjacent-channel rejection is stepped: between tabulated offsets the lower offset's value applies.",
    "A packet that spans several of a neighbour's dwells meets distinct channels of its hop set (a hop order "
    "visits distinct channels in consecutive dwells), averaged over which ones.",
    "A wideband interferer's level, and a system's wider than the victim, is its total power; the victim "
    "receives the share of its bandwidth (flat spectrum).",
    "Losses on different hops and attempts are independent; propagation is evaluated at the grid's mid "
    "frequency.",
)


def cautions_for(coordination: bool) -> list[str]:
    return list(CAUTIONS) + ([COORDINATION_CAUTION] if coordination else [])
