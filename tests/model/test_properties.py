"""Monotonicity properties of the model (hypothesis; common-sense physics)."""

import copy

from hypothesis import given, settings
from hypothesis import strategies as st

from cohop.assess import assess_site
from cohop.prepare import prepare_site
from tests import sites


@st.composite
def small_sites(draw):
    n = draw(st.integers(2, 5))
    count = 30
    systems = []
    for i in range(n):
        chans = draw(st.lists(st.integers(0, count - 1), min_size=1, max_size=count, unique=True))
        dwell = draw(st.sampled_from([0.005, 0.01, 0.04]))
        systems.append(sites.system(
            f"s{i}", sorted(chans), dwell_s=dwell, packet_airtime_s=dwell * draw(st.floats(0.05, 1.0)),
            activity_fraction=draw(st.floats(0.0, 1.0)), tx_power_dbm=draw(st.floats(-10, 30)),
            wanted_signal_dbm=draw(st.floats(-100, -40))))
    body = sites.site(systems, coupling_loss_db=None, n_channels=count)
    body["coupling"] = {"entries": [
        {"from_system": a["id"], "to_system": b["id"], "loss_db": draw(st.floats(30, 130))}
        for a in systems for b in systems if a["id"] != b["id"]]}
    return body


def _rates(body):
    return [s.collision_probability for s in assess_site(prepare_site(sites.load(body))).systems]


@settings(max_examples=60, deadline=None)
@given(small_sites(), st.data())
def test_more_coupling_loss_never_raises_a_collision_rate(body, data):
    before = _rates(body)
    more = copy.deepcopy(body)
    entry = data.draw(st.sampled_from(more["coupling"]["entries"]))
    entry["loss_db"] += data.draw(st.floats(0.1, 40.0))
    after = _rates(more)
    assert all(a <= b + 1e-15 for a, b in zip(after, before)), (entry, before, after)


@settings(max_examples=60, deadline=None)
@given(small_sites(), st.floats(-120, -30), st.floats(0.0, 1.0), st.floats(0, 25), st.booleans())
def test_adding_an_interferer_never_lowers_a_collision_rate(body, level, activity, offset_mhz, bursty):
    before = _rates(body)
    more = copy.deepcopy(body)
    lo = 2402e6 + offset_mhz * 1e6
    itf = {"id": "new", "low_hz": lo, "high_hz": lo + 2e6, "activity_fraction": activity,
           "levels": [{"system": s["id"], "level_dbm": level} for s in body["systems"]]}
    if bursty:
        itf.update(burst_s=0.002, period_s=0.05)
    more["interferers"] = [itf]
    after = _rates(more)
    assert all(a >= b - 1e-15 for a, b in zip(after, before))


@settings(max_examples=40, deadline=None)
@given(small_sites(), st.floats(0.5, 30.0))
def test_stronger_wanted_signal_never_raises_a_collision_rate(body, boost_db):
    before = _rates(body)
    more = copy.deepcopy(body)
    more["systems"][0]["wanted_signal_dbm"] += boost_db
    assert _rates(more)[0] <= before[0] + 1e-15
