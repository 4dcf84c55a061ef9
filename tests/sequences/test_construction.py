"""Every returned sequence uses its channels equally and keeps its spacing; aligned groups never collide."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from cohop.prepare import prepare_site
from cohop.sequences.analysis import aligned_channel_hits, analyse
from cohop.sequences.construct import build_sequences, required_spacing_channels
from tests import sites


def _site(hop_sets, group=None, n_channels=79, loss=60.0):
    systems = [sites.system(f"s{i}", hs, time_base_group=group, dwell_s=0.01, packet_airtime_s=0.002)
               for i, hs in enumerate(hop_sets)]
    return prepare_site(sites.load(sites.site(systems, coupling_loss_db=loss, n_channels=n_channels)))


@st.composite
def hop_set_lists(draw):
    n = draw(st.integers(1, 5))
    return [sorted(draw(st.lists(st.integers(0, 78), min_size=4, max_size=40, unique=True))) for _ in range(n)]


@settings(max_examples=60, deadline=None)
@given(hop_set_lists(), st.integers(0, 10_000))
def test_equal_use_and_spacing_on_every_sequence(hop_sets, seed):
    prep = _site(hop_sets)
    seqs, _ = build_sequences(prep, [np.array(h) for h in hop_sets], seed=seed)
    need = required_spacing_channels(prep, 100e-9)  # 2 grid steps of 1 MHz at 100 ns
    for s, hs in zip(seqs, hop_sets):
        assert sorted(s.channels.tolist()) == hs  # a permutation: each channel once per period
        steps = np.abs(np.diff(np.concatenate([s.channels, s.channels[:1]])))
        spread = max(hs) - min(hs)
        if len(hs) >= 6 and spread >= 3 * need * 2:  # room for the spacing: it must be kept
            assert steps.min() >= need, (hs, s.channels.tolist())


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
    # Equal sizes, overlapping sets: CP-SAT finds permutations with no shared channel in any slot.
    sets = [list(range(0, 20)), list(range(10, 30)), list(range(5, 25))]
    prep = _site(sets, group="g")
    seqs, notes = build_sequences(prep, [np.array(h) for h in sets])
    assert notes == [] and {s.construction for s in seqs} == {"orthogonal"}
    for t in range(20):
        used = [int(s.channels[t]) for s in seqs]
        assert len(set(used)) == 3
    report = analyse(prep, seqs, 100e-9)
    aligned = [p for p in report.pairs if p.aligned]
    assert aligned and all(p.aligned_hit_rate == 0.0 for p in aligned)
    # the catch: unaligned, the same sequences do collide (domain reference section 5)
    assert any(p.unaligned_hit_rate > 0 for p in aligned)


def test_unequal_sizes_in_a_group_are_reported():
    prep = _site([list(range(10)), list(range(20, 32))], group="g")
    seqs, notes = build_sequences(prep, [np.arange(10), np.arange(20, 32)])
    assert any("equal hop-set sizes" in n for n in notes)
    assert all(s.construction == "one-coincidence" for s in seqs)


def test_one_coincidence_members_sharing_a_prime_hop_set_coincide_once():
    # Shared hop set of prime size and equal dwell: the family property holds exactly (Titlebaum 1981).
    hs = list(range(0, 79, 6))[:13]  # 13 channels, 6 apart (spacing kept without repair)
    prep = _site([hs, hs, hs])
    seqs, _ = build_sequences(prep, [np.array(hs)] * 3)
    report = analyse(prep, seqs, 100e-9)
    shared = [p for p in report.pairs if p.shared_channels == 13]
    assert shared and all(p.coincidences_max == 1 for p in shared)
