"""The sequence analysis against direct computations from the definitions (small cases, brute force).

Hit figures read the soft harm (cohop.harm): the definitions below walk the slots or phases with rho of each
meeting; with fading "none" rho is 1 inside the threshold window and 0 outside, which the fading-none cases
check against the window itself (and against figures the threshold code gave)."""

import itertools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from cohop.prepare import prepare_site
from cohop.sequences import analysis
from cohop.sequences.analysis import longest_runs_by_row
from cohop.sequences.construct import Sequence
from cohop.stats.overlap import random_phase_overlap, survival
from tests import sites
from tests.sequences import threshold


def _groupby_longest(rows) -> int:
    # Reference: the standard library's itertools.groupby, run lengths of equal items.
    return max((sum(1 for _ in g) for row in rows for k, g in itertools.groupby(row.tolist()) if k), default=0)


def _longest(hits) -> int:
    h = np.atleast_2d(hits)
    return int(longest_runs_by_row(h.ravel(), np.arange(h.shape[0]) * h.shape[1]).max())


@settings(max_examples=300, deadline=None)
@given(arrays(bool, st.tuples(st.integers(1, 6), st.integers(1, 40))))
def test_longest_run_matches_groupby(hits):
    assert _longest(hits) == _groupby_longest(hits)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.lists(st.booleans(), min_size=1, max_size=12), min_size=1, max_size=6))
def test_runs_of_rows_laid_end_to_end_stay_apart(rows):
    flat = np.array([b for row in rows for b in row])
    starts = np.cumsum([0] + [len(r) for r in rows[:-1]])
    assert longest_runs_by_row(flat, starts).tolist() == [_groupby_longest([np.array(r)]) for r in rows]


def test_longest_run_of_heads_grows_like_log2_n():
    # Schilling, "The longest run of heads", College Math. J. 21 (1990): for n fair flips the expected
    # longest run is about log2(n) - 2/3, with a standard deviation near 1.87 independent of n (from memory).
    rng = np.random.default_rng(5)
    n = 4096
    runs = [_longest(rng.random(n) < 0.5) for _ in range(400)]
    assert abs(np.mean(runs) - (np.log2(n) - 2 / 3)) < 0.35


def _prep(dwells, hop_sets, n_channels=40, loss=60.0, group=None, fading=None):
    extra = {} if fading is None else {"fading": {"model": fading}}
    systems = [sites.system(f"s{i}", [int(c) for c in hs], dwell_s=d, packet_airtime_s=min(d, 1e-3),
                            time_base_group=group, **extra)
               for i, (d, hs) in enumerate(zip(dwells, hop_sets))]
    return prepare_site(sites.load(sites.site(systems, coupling_loss_db=loss, n_channels=n_channels)))


def _run_by_definition(prep, v, a, x, y, phases, horizon):
    """Longest run of v's hops k < horizon during which a's dwell (phase phi_q = (q L_a + 1/2) / phases of
    a's dwells) is on a channel within v's window, over every offset q: hop by hop."""
    dv, da = prep.site.systems[v].dwell_s, prep.site.systems[a].dwell_s
    w = prep.window[v, a]
    best = 0
    for q in range(phases):
        phi = (q * y.size + 0.5) / phases * da
        hits = [abs(int(x[k % x.size]) - int(y[math.floor((k * dv - phi) / da) % y.size])) <= w
                for k in range(horizon)]
        best = max(best, _groupby_longest([np.array(hits)]))
    return best


@pytest.mark.parametrize("dwells", [(0.01, 0.03), (0.01, 0.025), (0.04, 0.01), (0.02, 0.05)])
@pytest.mark.parametrize("phases", [3, 16, 64])
def test_sampled_longest_runs_match_the_definition(dwells, phases):
    # Unequal dwells: the search over `phases` offsets and two periods of both orders, hop by hop.
    rng = np.random.default_rng(int(1e3 * sum(dwells)) + phases)
    x, y = rng.permutation(np.arange(0, 40, 3)), rng.permutation(np.arange(1, 40, 2))
    prep = _prep(dwells, [np.sort(x), np.sort(y)])
    runs, searches, used = analysis.longest_runs(prep, [(0, 1), (1, 0)], {0: x, 1: y}, phases)
    assert used == phases and not any(s.cut or s.exact for s in searches)
    assert runs[0] == _run_by_definition(prep, 0, 1, x, y, phases, searches[0].horizon_hops)
    assert runs[1] == _run_by_definition(prep, 1, 0, y, x, phases, searches[1].horizon_hops)


def test_a_long_dwell_beside_a_short_one_is_searched_over_a_bounded_horizon():
    # 0.1 ms beside 10 s dwells: two periods of the slow sequence are 15.8 million hops of the fast one. The
    # search stops at RUN_HORIZON_HOPS and says so; its cells stay within RUN_CELLS.
    order = np.arange(79)
    prep = _prep((1e-4, 10.0), [order, order], n_channels=79)
    runs, searches, used = analysis.longest_runs(prep, [(0, 1), (1, 0)], {0: order, 1: order})
    assert searches[0].natural_hops == 2 * 79 * 100_000 and searches[0].cut
    assert searches[0].horizon_hops == analysis.RUN_HORIZON_HOPS
    cells = sum(s.horizon_hops * (min(used, 79) if s.equal_dwell else used) for s in searches)
    assert cells <= analysis.RUN_CELLS
    assert 0 < runs[0] <= analysis.RUN_HORIZON_HOPS


def test_many_pairs_share_the_cells_by_fewer_offsets_then_shorter_horizons():
    # Unequal dwells (1 and 2 ms in turn): the pairs of different dwells are searched over sampled offsets.
    rng = np.random.default_rng(2)
    n = 30
    orders = {v: rng.permutation(79) for v in range(n)}
    prep = _prep([1e-3 * (1 + v % 2) for v in range(n)], [np.arange(79)] * n, n_channels=79)
    pairs = [(v, a) for v in range(n) for a in range(n) if v % 2 != a % 2]
    runs, searches, used = analysis.longest_runs(prep, pairs, orders, 128, cells=100_000)
    assert not any(s.equal_dwell for s in searches)
    assert used < 128 and sum(s.horizon_hops * used for s in searches) <= 100_000
    # 450 pairs at one offset and 16 hops (the shortest horizon) are 7200 cells: the floor, not the limit
    _, searches, used = analysis.longest_runs(prep, pairs, orders, 128, cells=5_000)
    assert used == 1 and all(s.cut and s.horizon_hops == 16 for s in searches)


def _rho(prep, v, a, offsets):
    """Harm of one transmission of a at v per channel offset, read from the kernel (cohop.harm) directly."""
    return prep.harm.system_harm(v, np.abs(offsets))[a]


def _aligned_by_definition(prep, v, a, x, y, harm):
    """Walk the common period slot by slot: v on x[t mod Lx], a on y[t mod Ly]; a slot where a transmits
    (alpha) destroys v's hop with harm(|x - y|)."""
    period = math.lcm(x.size, y.size)
    t = np.arange(period)
    xv, ya = x[t % x.size], y[t % y.size]
    hits = harm(np.abs(xv - ya))
    alpha = prep.site.systems[a].activity_fraction
    per_channel = {int(c): alpha * hits[xv == c].mean() for c in np.unique(x)}
    return alpha * hits.mean(), per_channel


@pytest.mark.parametrize("fading", ["none", "rayleigh"])
@pytest.mark.parametrize("lx, ly", [(7, 11), (12, 18), (9, 9), (5, 30)])
def test_aligned_hits_by_offset_class_match_walking_the_period(lx, ly, fading):
    rng = np.random.default_rng(lx * ly)
    x, y = rng.integers(0, 20, lx), rng.integers(0, 20, ly)
    prep = _prep((0.01, 0.01), [np.unique(x), np.unique(y)], n_channels=20, loss=40.0, fading=fading)
    assert prep.window[0, 1] == 1  # 31 dB excess: over the threshold within 1 MHz (11 dB rejection), not 2 (41 dB)
    if fading == "none":  # the threshold form: a hit iff within the window
        harm = lambda d: (d <= prep.window[0, 1]).astype(float)  # noqa: E731
    else:  # Rayleigh, steady link: rho = 1 - exp(-10^(E/10)) (cohop.physics.capture [2]), soft at 2 MHz and on
        harm = lambda d: _rho(prep, 0, 1, d)  # noqa: E731
        assert 0 < _rho(prep, 0, 1, [2])[0] < 1  # E = -10 dB at 2 MHz: rho = 0.095
    rate, per_channel = _aligned_by_definition(prep, 0, 1, x, y, harm)
    assert analysis.aligned_rate(prep, 0, 1, x, y) == pytest.approx(rate)
    channels = np.arange(20)
    got = analysis.aligned_channel_hits(prep, 0, 1, x, y, channels)
    assert got.tolist() == pytest.approx([per_channel.get(c, 0.0) for c in range(20)])


@pytest.mark.parametrize("fading", ["none", "rayleigh"])
def test_pair_figures_match_the_definitions_and_skip_pairs_that_cannot_meet(fading):
    # s0 and s1 overlap; s2 sits far away (no channel within reach of harm of theirs): its pairs are left out.
    # K <= 1 overlapped dwell here (T_v + T_a = 2 ms < D_a), so the random-phase figure is
    # 1 - E_K[1 - alpha mean_j rho(|c - y_j|)] (cohop.stats.overlap), rho re-derived from the kernel.
    rng = np.random.default_rng(4)
    sets = [np.arange(0, 20), np.arange(10, 30), np.arange(60, 79)]
    prep = _prep((0.01, 0.02, 0.01), sets, n_channels=79, fading=fading)
    seqs = [Sequence(system=v, channels=rng.permutation(h), construction="given", component=-1)
            for v, h in enumerate(sets)]
    report = analysis.analyse(prep, seqs, 100e-9)
    assert {(p.a, p.b) for p in report.pairs} == {(0, 1), (1, 0)}
    assert not report.reach[0, 2] and not report.reach[2, 0] and report.reach[0, 1]
    for p in report.pairs:
        x, y = seqs[p.a].channels, seqs[p.b].channels
        offsets = np.abs(x[:, None] - y[None, :])
        harm = offsets <= prep.window[p.a, p.b] if fading == "none" else _rho(prep, p.a, p.b, offsets)
        sv, sa = prep.site.systems[p.a], prep.site.systems[p.b]
        overlap = random_phase_overlap(sv.packet_airtime_s, sa.packet_airtime_s, sa.dwell_s)
        unaligned = np.mean(1 - survival(overlap, sa.activity_fraction * harm.mean(axis=1)))
        assert p.unaligned_hit_rate == pytest.approx(unaligned)
        assert p.shared_channels == 10 and p.coincidences_max is None  # different dwells


def _run_over_every_shift(prep, v, a, x, y):
    """Equal dwells: hop k of v meets hop k + s of a; every s, followed over two common periods (enough to
    see any run that ends, a run of a whole period never does), capped at two periods of both orders."""
    period = math.lcm(x.size, y.size)
    k = np.arange(2 * period)
    best = 0
    for shift in range(y.size):
        hits = np.abs(x[k % x.size] - y[(k + shift) % y.size]) <= prep.window[v, a]
        best = max(best, _groupby_longest([hits]))
    return min(best, 2 * max(x.size, y.size))


@settings(max_examples=150, deadline=None)
@given(st.lists(st.integers(0, 9), min_size=1, max_size=12), st.lists(st.integers(0, 9), min_size=1, max_size=12))
def test_equal_dwells_are_searched_exactly_over_every_offset(x, y):
    x, y = np.array(x), np.array(y)
    prep = _prep((0.01, 0.01), [np.unique(x), np.unique(y)], n_channels=10, loss=40.0)  # window 1
    runs, searches, _ = analysis.longest_runs(prep, [(0, 1)], {0: x, 1: y})
    assert searches[0].exact and not searches[0].cut
    assert runs[0] == _run_over_every_shift(prep, 0, 1, x, y)


def test_coprime_periods_at_the_cap_are_searched_exactly():
    # 8191 and 8192 hops of the same channel order, co-channel only: at the right offset the two meet on
    # 8191 hops in a row (then 8191 against 8191 + 1 differs); the sampled offsets never saw that.
    x, y = np.arange(8191), np.arange(8192)
    prep = _prep((0.01, 0.01), [x, y], n_channels=8192, loss=60.0)
    assert prep.window[0, 1] == 0
    runs, searches, _ = analysis.longest_runs(prep, [(0, 1), (1, 0)], {0: x, 1: y})
    assert runs.tolist() == [8191, 8191] and all(s.exact for s in searches)


def _soft_pair(dwell_v, airtime_v, dwell_a, airtime_a, set_v, set_a, loss=48.0, seed=0):
    """v and a unsynchronised, Rayleigh-faded wanted signals (the default), a at 70 % activity; 48 dB coupling
    puts a 23 dB over v's capture threshold co-channel, so rho is about 1 co-channel and at 1 MHz, 0.016 at
    2 MHz and 0.0016 from 3 MHz on (cohop.physics.capture [2]: 1 - exp(-10^(E/10))): a tail over the grid."""
    systems = [sites.system("v", set_v, dwell_s=dwell_v, packet_airtime_s=airtime_v),
               sites.system("a", set_a, dwell_s=dwell_a, packet_airtime_s=airtime_a, activity_fraction=0.7)]
    prep = prepare_site(sites.load(sites.site(systems, coupling_loss_db=loss, n_channels=30)))
    rng = np.random.default_rng(seed)
    seqs = [Sequence(system=0, channels=rng.permutation(np.array(set_v)), construction="given", component=-1),
            Sequence(system=1, channels=rng.permutation(np.array(set_a)), construction="given", component=-1)]
    return prep, seqs


def test_random_phase_hit_rate_matches_enumerating_the_phases_of_the_real_orders():
    # T_v + T_a = 6 ms < D_a = 10 ms: at most one of a's dwells overlaps v's packet, so the figure is exactly
    # the average over v's hops and a's phase of 1 - prod over the dwells overlapping the packet of
    # (1 - alpha rho(|x_t - y_m|)) [definition: the packet [t D_v, t D_v + T_v) against a's dwells
    # [m D_a + phi, m D_a + phi + T_a)]. The phase runs over a fine grid whose cells (0.2 ms) hold no
    # breakpoint of the overlap (T_v, T_a are multiples of it): exact, not sampled.
    prep, seqs = _soft_pair(0.01, 0.004, 0.01, 0.002, range(0, 20), range(5, 30))
    rho_all = prep.harm.system_harm(0, np.arange(30))[1]
    assert prep.harm.reach[0, 1] == 30 and len(set(rho_all.round(12))) >= 3  # several bands, harm at any offset
    x, y = seqs[0].channels, seqs[1].channels
    dv, tv, da, ta, alpha = 0.01, 0.004, 0.01, 0.002, 0.7
    cells = 50
    phi = (np.arange(y.size * cells) + 0.5) * da / cells
    lost = []
    for t in range(x.size):
        survive = np.ones(phi.size)
        first = np.floor((t * dv - phi) / da).astype(int)
        for shift in range(-2, 3):
            m = first + shift
            start = m * da + phi
            overlaps = (start < t * dv + tv) & (start + ta > t * dv)
            survive *= np.where(overlaps, 1 - alpha * rho_all[np.abs(x[t] - y[m % y.size])], 1.0)
        lost.append(np.mean(1 - survive))
    report = analysis.analyse(prep, seqs, 100e-9)
    pair = next(p for p in report.pairs if (p.a, p.b) == (0, 1))
    assert pair.unaligned_hit_rate == pytest.approx(np.mean(lost), rel=1e-9)


def test_several_overlapped_dwells_match_enumerating_the_subsets_of_the_real_order():
    # K = (T_v + T_a) / D_a = 3 overlapped dwells of a's 12-position order: the model takes them as a uniform
    # 3-subset of distinct positions (cohop.stats.overlap), each destroying v's hop with alpha rho(offset).
    # Enumerated: every 3-subset of a's positions, for every channel of v's order.
    prep, seqs = _soft_pair(0.01, 0.004, 0.002, 0.002, range(0, 10), range(4, 16))
    x, y = seqs[0].channels, seqs[1].channels
    overlap = random_phase_overlap(0.004, 0.002, 0.002)
    keep = 1 - 0.7 * prep.harm.system_harm(0, np.abs(x[:, None] - y[None, :]))[1]  # (x, y)
    lost = 0.0
    for k, p_k in overlap.probabilities().items():
        assert k < y.size
        per_hop = [np.mean([np.prod(row[list(c)]) for c in itertools.combinations(range(y.size), k)]) for row in keep]
        lost += p_k * (1 - np.mean(per_hop))
    report = analysis.analyse(prep, seqs, 100e-9)
    pair = next(p for p in report.pairs if (p.a, p.b) == (0, 1))
    assert pair.unaligned_hit_rate == pytest.approx(lost, rel=1e-9)


def test_soft_harm_below_the_threshold_hits_slot_aligned_neighbours_on_adjacent_channels():
    # Slot-aligned orders that never share a channel in a slot but meet 1 MHz apart: with the threshold form
    # (fading "none", window 0 at 60 dB) that never hits; with a Rayleigh-faded wanted signal the adjacent
    # channel is 0 dB over the threshold, rho = 1 - exp(-1) = 0.632 (cohop.physics.capture [2]), once per
    # period of 4 slots here.
    x, y = np.array([0, 4, 8, 12]), np.array([1, 10, 20, 30])
    for fading, want in (("none", 0.0), ("rayleigh", (1 - math.exp(-1)) / 4)):
        prep = _prep((0.01, 0.01), [x, y], n_channels=40, loss=60.0, group="g", fading=fading)
        assert prep.window[0, 1] == 0
        assert analysis.aligned_rate(prep, 0, 1, x, y) == pytest.approx(want, rel=1e-12)


def test_fading_none_reproduces_the_threshold_figures():
    prep, orders = threshold.scenario()
    seqs = [Sequence(system=v, channels=q, construction="given", component=-1) for v, q in enumerate(orders)]
    report = analysis.analyse(prep, seqs, 100e-9)
    got = [(p.a, p.b, p.unaligned_hit_rate, p.aligned_hit_rate, p.longest_run, p.shared_channels, p.coincidences_max)
           for p in report.pairs]
    assert got == threshold.PAIRS  # bit for bit: one band of harm 1 is the old count
