"""Every returned sequence uses its channels equally and keeps its spacing; aligned groups never collide."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cohop.prepare import prepare_site
from cohop.sequences.analysis import aligned_channel_hits, analyse
from cohop.sequences.construct import build_sequences, required_spacing_channels
from tests import sites


def _site(hop_sets, group=None, n_channels=79, loss=60.0, fading=None):
    extra = {} if fading is None else {"fading": {"model": fading}}
    systems = [sites.system(f"s{i}", hs, time_base_group=group, dwell_s=0.01, packet_airtime_s=0.002, **extra)
               for i, hs in enumerate(hop_sets)]
    return prepare_site(sites.load(sites.site(systems, coupling_loss_db=loss, n_channels=n_channels)))


@st.composite
def hop_set_lists(draw):
    n = draw(st.integers(1, 5))
    return [sorted(draw(st.lists(st.integers(0, 78), min_size=4, max_size=40, unique=True))) for _ in range(n)]


@settings(max_examples=60, deadline=None)
@given(hop_set_lists(), st.integers(0, 10_000))
def test_equal_use_and_spacing_on_every_sequence(hop_sets, seed):
    # Each order visits each of its channels once. A system alone in its component is spaced as the set
    # allows; systems sharing channels keep one common relabelling, so where it cannot space a system's
    # hops a note names the system.
    prep = _site(hop_sets)
    seqs, notes = build_sequences(prep, [np.array(h) for h in hop_sets], seed=seed)
    need = required_spacing_channels(prep, 100e-9)  # 2 grid steps of 1 MHz at 100 ns
    for s, hs in zip(seqs, hop_sets):
        assert sorted(s.channels.tolist()) == hs  # a permutation: each channel once per period
        steps = np.abs(np.diff(np.concatenate([s.channels, s.channels[:1]])))
        spread = max(hs) - min(hs)
        if len(hs) >= 6 and spread >= 3 * need * 2 and steps.min() < need:  # room for the spacing
            alone = sum(1 for t in seqs if t.component == s.component) == 1
            assert not alone, (hs, s.channels.tolist())
            assert any(f"s{s.system}" in n and "closer than" in n for n in notes), notes


def test_identical_hop_sets_in_a_group_get_cyclic_shifts_without_collisions():
    hs = list(range(0, 79, 3))
    prep = _site([hs, hs, hs], group="g")
    seqs, _ = build_sequences(prep, [np.array(hs)] * 3)
    assert {s.construction for s in seqs} == {"cyclic shift"}
    for i in range(3):
        for j in range(3):
            if i != j:
                hits = aligned_channel_hits(prep, i, j, seqs[i].channels, seqs[j].channels, np.array(hs))
                assert hits.max() == 0.0


def test_different_hop_sets_in_a_group_get_orthogonal_sequences():
    # Equal sizes, overlapping sets: CP-SAT finds permutations with no shared channel in any slot. Fading "none"
    # (the threshold form: harm only inside the window, 0 channels at 60 dB): no slot is hit. With a faded wanted
    # signal the adjacent channels a slot may still pair carry soft harm (cohop.harm; tests/sequences/
    # test_analysis.py checks that figure).
    sets = [list(range(0, 20)), list(range(10, 30)), list(range(5, 25))]
    prep = _site(sets, group="g", fading="none")
    seqs, notes = build_sequences(prep, [np.array(h) for h in sets])
    assert notes == [] and {s.construction for s in seqs} == {"orthogonal"}
    for t in range(20):
        used = [int(s.channels[t]) for s in seqs]
        assert len(set(used)) == 3
    report = analyse(prep, seqs, 100e-9)
    aligned = [p for p in report.pairs if p.aligned]
    assert aligned and all(p.aligned_hit_rate == 0.0 for p in aligned)
    # the catch: unaligned, the same sequences do collide (derived: alignment is what keeps them apart)
    assert any(p.unaligned_hit_rate > 0 for p in aligned)


def test_unequal_sizes_in_a_group_are_reported():
    prep = _site([list(range(10)), list(range(20, 32))], group="g")
    seqs, notes = build_sequences(prep, [np.arange(10), np.arange(20, 32)])
    assert any("equal hop-set sizes" in n for n in notes)
    assert all(s.construction == "linear congruence" and s.prime is not None for s in seqs)  # each alone


def test_one_coincidence_members_sharing_a_prime_hop_set_coincide_once():
    # Shared hop set of prime size and equal dwell: the family property holds exactly (Titlebaum 1981).
    hs = list(range(0, 79, 6))[:13]  # 13 channels, 6 apart (spacing kept without repair)
    prep = _site([hs, hs, hs])
    seqs, _ = build_sequences(prep, [np.array(hs)] * 3)
    report = analyse(prep, seqs, 100e-9)
    shared = [p for p in report.pairs if p.shared_channels == 13]
    assert shared and all(p.coincidences_max == 1 for p in shared)


def _brute_max_coincidences(x, y) -> int:
    # Definition (Lempel and Greenberger 1974): H_xy(tau) = sum over one common period of [x_t = y_(t+tau)].
    period = int(np.lcm(x.size, y.size))
    t = np.arange(period)
    return max(int(np.count_nonzero(x[t % x.size] == y[(t + tau) % y.size])) for tau in range(period))


@pytest.mark.parametrize("channels", [range(17), range(13), range(31)])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_spacing_repair_keeps_the_family_one_coincidence(channels, seed):
    # Three systems share one hop set of prime size on a 1 MHz grid at the default 100 ns delay spread (2
    # channels apart wanted). Titlebaum 1981 / Shaar and Davies 1984: the family a t mod p meets once per
    # period at every shift, and a relabelling common to all members keeps that. Repairing each member
    # separately (the earlier construction) gave 2 to 4 coincidences on these grids.
    hs = list(channels)
    prep = _site([hs, hs, hs])
    seqs, notes = build_sequences(prep, [np.array(hs)] * 3, seed=seed)
    need = required_spacing_channels(prep, 100e-9)
    assert need == 2 and notes == []
    assert {s.construction for s in seqs} == {"one-coincidence"}
    for i, x in enumerate(seqs):
        steps = np.abs(np.diff(np.concatenate([x.channels, x.channels[:1]])))
        assert steps.min() >= need
        for y in seqs[i + 1:]:
            assert _brute_max_coincidences(x.channels, y.channels) == 1
    assert {s.family_max_coincidences for s in seqs} == {1}


def test_a_set_too_narrow_for_a_common_relabelling_keeps_the_family_and_says_so():
    # Five adjacent channels, two systems: member 1 steps by one label, member 2 by two, so every pair of
    # labels is consecutive in one of them and some pair of adjacent channels always is: no common relabelling
    # spaces both. The family (one coincidence) is kept and a note says the spacing was not reached.
    hs = list(range(5))
    prep = _site([hs, hs])
    seqs, notes = build_sequences(prep, [np.array(hs)] * 2, seed=0)
    assert {s.construction for s in seqs} == {"one-coincidence"}
    assert _brute_max_coincidences(seqs[0].channels, seqs[1].channels) == 1
    assert any("closer than the 2-channel spacing" in n and ("s0" in n or "s1" in n) for n in notes), notes


def test_deleted_labels_are_measured_and_named_for_what_they_are():
    # Hop sets of 15 channels from a union of 17 (p = 17): each member leaves labels out, which can add
    # coincidences; the family is called one-coincidence only when the measured maximum is 1.
    sets = [list(range(0, 15)), list(range(2, 17)), list(range(1, 16))]
    prep = _site(sets)
    seqs, _ = build_sequences(prep, [np.array(h) for h in sets], seed=0)
    measured = max(_brute_max_coincidences(x.channels, y.channels) for i, x in enumerate(seqs) for y in seqs[i + 1:])
    assert {s.family_max_coincidences for s in seqs} == {measured}
    assert {s.construction for s in seqs} == {"one-coincidence" if measured == 1 else "linear congruence"}
