"""The charts' pure helpers: lanes never overlap, percentages never scientific, bins cover [0, 1]."""

from hypothesis import given
from hypothesis import strategies as st

from cohop.charts import data

intervals = st.lists(st.tuples(st.floats(-1e3, 1e3), st.floats(0, 50)).map(lambda t: (t[0], t[0] + t[1])),
                     max_size=30)


@given(intervals, st.floats(0, 5))
def test_intervals_in_one_lane_never_overlap(items, gap):
    lanes = data.pack_lanes(items, gap)
    for lane in set(lanes):
        mine = sorted(iv for iv, k in zip(items, lanes) if k == lane)
        assert all(a[1] + gap <= b[0] for a, b in zip(mine, mine[1:]))


def test_first_fit_uses_no_more_lanes_than_the_deepest_overlap():
    # interval graphs: first fit by start needs exactly the largest number of intervals over one point
    items = [(0, 4), (1, 2), (3, 6), (5, 9), (2.5, 3.5), (7, 8)]
    depth = max(sum(lo <= x < hi for lo, hi in items) for x in [i / 10 for i in range(100)])
    assert max(data.pack_lanes(items)) + 1 == depth


@given(st.floats(0, 1))
def test_percentages_are_plain_decimals(p):
    text = data.pct(p)
    assert "e" not in text and text.endswith(" %")
    assert 0 <= data.hit_bin(p) < len(data.HIT_BINS) - 1
    assert data.HIT_BINS[data.hit_bin(p)] <= p


def test_percentages_keep_two_significant_digits():
    assert [data.pct(p) for p in (0, 0.5, 0.0234, 0.000859, 1e-9)] == ["0 %", "50 %", "2.3 %", "0.086 %",
                                                                      "< 0.0001 %"]


def test_a_new_system_in_a_replan_has_only_its_new_row():
    import copy

    from tests.charts.answers import replanned

    _, answer = copy.deepcopy(replanned())
    first = answer["diff"][0]
    first.update(status="new system", before=None, dropped=[], added=list(answer["plan"][0]["hop_set"]))
    rows = data.rows(answer)
    assert [r.label for r in rows[:2]] == [f"{first['id']} new", f"{answer['diff'][1]['id']} now"]
    assert rows[0].added == rows[0].channels
