"""Every rule across a site's fields lives once, in cohop.site_rules: `load_site` (no HTTP layer) and the
request schema build the same Site and refuse the same sites with the same problems at the same pointers."""

from __future__ import annotations

import copy

import marshmallow as ma
import pytest

from cohop import limits, samples
from cohop.api.problems import flatten_messages
from cohop.api.schemas.site import SiteSchema
from cohop.errors import SiteError
from cohop.site_rules import load_site, pointer
from tests import sites
from tests.problems import pop_at, set_at

SAMPLES = ("water_works", "container_terminal", "open_pit_mine", "water_works_replan")


def _schema_problems(body: dict) -> list[tuple[str, str]]:
    try:
        SiteSchema().load(copy.deepcopy(body))
    except ma.ValidationError as err:
        return sorted((e["pointer"], e["detail"]) for e in flatten_messages(err.messages))
    return []


def _loader_problems(body: dict) -> list[tuple[str, str]]:
    try:
        load_site(copy.deepcopy(body))
    except SiteError as err:
        return sorted(err.problems)
    return []


@pytest.mark.parametrize("name", SAMPLES)
def test_load_site_builds_what_the_schema_builds(name):
    body = samples.load(name)["site"]
    assert load_site(copy.deepcopy(body)) == SiteSchema().load(copy.deepcopy(body))


def test_defaults_are_the_same_both_ways():
    # the least a site may say: every optional field takes the site dataclasses' default either way
    body = sites.site([sites.system("a"), sites.system("b")])
    body["coupling"]["propagation"] = {"model": "log_distance", "exponent": 3.0}
    body["interferers"] = [{"id": "tv", "centre_hz": 2440e6, "width_hz": 8e6, "levels": [
        {"system": "a", "level_dbm": -90.0}, {"system": "b", "level_dbm": -90.0}]}]
    loaded = load_site(copy.deepcopy(body))
    assert loaded == SiteSchema().load(copy.deepcopy(body))
    assert loaded.coupling.propagation.reference_distance_m == 1.0  # the documented default, not None
    assert (loaded.interferers[0].low_hz, loaded.interferers[0].high_hz) == (2436e6, 2444e6)


def _add_survey(**fields):
    def mutate(site):
        site["surveys"] = [{"id": "sv", "frequencies_hz": [902.2e6, 902.4e6, 902.6e6],
                            "levels_dbm": [-90.0, -80.0, -90.0], "resolution_bandwidth_hz": 100e3, **fields}]
    return mutate


def _group(*indices, dwells):
    def mutate(site):
        for i, d in zip(indices, dwells):
            site["systems"][i].update(time_base_group="g", dwell_s=d, packet_airtime_s=min(d, 0.004))
    return mutate


def _strip_positions(site):
    for s in site["systems"]:
        s.pop("position", None)
    site["interferers"] = [i for i in site["interferers"] if "levels" in i]


def _long_beside_short(site):
    """A 0.2 s packet beside 0.1 ms dwells: about 2000 overlapped dwells, above the modelled cap."""
    site["systems"][4].update(dwell_s=0.2, packet_airtime_s=0.2)
    site["systems"][3].update(dwell_s=1e-4, packet_airtime_s=1e-4)


def _both(*mutations):
    def mutate(site):
        for m in mutations:
            m(site)
    return mutate


# (case, mutation of the water works site, pointer of a problem both ways, relative to the site)
RULES = [
    ("airtime-above-dwell", set_at(("systems", 0, "packet_airtime_s"), 0.05), "/systems/0/packet_airtime_s"),
    ("wanted-and-link-distance", set_at(("systems", 0, "link_distance_m"), 100.0), "/systems/0/wanted_signal_dbm"),
    ("no-margin-or-sensitivity", pop_at(("systems", 0, "sensitivity_dbm")), "/systems/0/fade_margin_db"),
    ("rejection-offsets-fall", set_at(("systems", 0, "rejection"), [{"offset_hz": 2e5, "rejection_db": 30.0},
                                                                    {"offset_hz": 1e5, "rejection_db": 40.0}]),
     "/systems/0/rejection/1/offset_hz"),
    ("hop-set-repeats", set_at(("systems", 0, "hop_set"), [1, 2, 2]), "/systems/0/hop_set"),
    ("sequence-off-hop-set", _both(set_at(("systems", 0, "hop_set"), [1, 3]),
                                   set_at(("systems", 0, "sequence"), [1, 2])), "/systems/0/sequence"),
    ("rician-without-k", set_at(("systems", 0, "fading"), {"model": "rician"}), "/systems/0/fading/k_factor_db"),
    ("log-distance-without-exponent", pop_at(("coupling", "propagation", "exponent")),
     "/coupling/propagation/exponent"),
    ("coupling-to-itself", set_at(("coupling", "entries", 0, "to_system"), "scada-backbone"),
     "/coupling/entries/0/to_system"),
    ("edges-and-centre", set_at(("interferers", 0, "centre_hz"), 922e6), "/interferers/0/low_hz"),
    ("burst-without-period", pop_at(("interferers", 1, "period_s")), "/interferers/1/period_s"),
    ("band-upside-down", set_at(("band",), {"low_hz": 925e6, "high_hz": 902e6}), "/band/high_hz"),
    ("band-outside-profile", set_at(("band",), {"low_hz": 902e6, "high_hz": 930e6}), "/band"),
    ("custom-without-band", set_at(("profile",), "custom"), "/band"),
    ("grid-below-band", set_at(("grid", "first_centre_hz"), 901.9e6), "/grid/first_centre_hz"),
    ("hop-channel-off-grid", set_at(("systems", 3, "hop_set"), [70, 128, 129]), "/systems/3/hop_set/2"),
    ("duplicate-system-id", set_at(("systems", 1, "id"), "scada-backbone"), "/systems/1/id"),
    ("interferer-id-is-system-id", set_at(("interferers", 0, "id"), "dosing-link"), "/interferers/0/id"),
    ("coupling-unknown-system", set_at(("coupling", "entries", 0, "to_system"), "ghost"),
     "/coupling/entries/0/to_system"),
    ("level-unknown-system", set_at(("interferers", 1, "levels", 2, "system"), "ghost"),
     "/interferers/1/levels/2/system"),
    ("link-distance-without-propagation", pop_at(("coupling", "propagation")), "/systems/4/link_distance_m"),
    ("group-dwells-differ", _group(0, 2, dwells=(0.04, 0.05)), "/systems/2/dwell_s"),
    ("too-many-overlaps", _long_beside_short, "/systems/3/dwell_s"),
    ("survey-for-nobody", _add_survey(position={"x_m": 5000.0, "y_m": 0.0}), "/surveys/0/position"),
    ("survey-names-nobody-known", _add_survey(applies_to=["ghost"]), "/surveys/0/applies_to/0"),
    ("survey-frequencies-fall", _add_survey(applies_to=["scada-backbone"], frequencies_hz=[902.4e6, 902.2e6, 902.6e6]),
     "/surveys/0/frequencies_hz/1"),
    ("missing-coupling", _both(_strip_positions, set_at(("systems", 4, "wanted_signal_dbm"), -80.0),
                               pop_at(("systems", 4, "link_distance_m"))), "/coupling"),
    ("interferer-without-level", pop_at(("interferers", 0, "eirp_dbm")), "/interferers/0"),
]


@pytest.mark.parametrize("case, mutate, where", RULES, ids=[r[0] for r in RULES])
def test_each_rule_refuses_the_same_way_in_the_loader_and_the_schema(case, mutate, where):
    body = samples.load("water_works")["site"]
    mutate(body)
    loader = _loader_problems(body)
    assert where in [p for p, _ in loader], loader
    assert loader == _schema_problems(body)


def test_the_overlap_rule_names_the_cap():
    body = samples.load("water_works")["site"]
    _long_beside_short(body)
    (message,) = [m for p, m in _loader_problems(body) if p == "/systems/3/dwell_s"]
    assert f"at most {limits.MAX_OVERLAPS}" in message


def test_completeness_is_checked_only_on_a_consistent_site():
    # an unknown system in a coupling entry leaves its pair uncoupled too; the answer names the cause only
    body = samples.load("water_works")["site"]
    _strip_positions(body)
    body["systems"][4]["wanted_signal_dbm"] = -80.0
    body["systems"][4].pop("link_distance_m")
    body["coupling"]["entries"][0]["to_system"] = "ghost"
    assert [p for p, _ in _loader_problems(body)] == ["/coupling/entries/0/to_system"]


def test_an_unknown_profile_is_refused_by_the_loader():
    body = samples.load("water_works")["site"]
    body["profile"] = "mars-915"
    [(where, message)] = _loader_problems(body)
    assert where == "/profile"
    assert message.startswith("Unknown profile 'mars-915'; one of: ") and "fcc15.247-902-928" in message


def test_pointers_escape_slash_and_tilde():
    assert pointer(("a/b~c", 0)) == "/a~1b~0c/0"
