"""The joint law at a Rician-faded victim (`cohop.joint`): every overlapped transmission together.

Sources: the Rician power s of K-factor K has 2 (K + 1) s ~ ncx2(2, 2K) (Goldsmith, "Wireless Communications",
ch. 3; scipy.stats.ncx2), and steady interference powers add, so a hop with steady transmissions x_1..x_n
(in units of the mean wanted power over the capture ratio) survives with ncx2.sf(2 (K + 1)(m + sum x)). The
evaluator's figures are checked against a brute-force enumeration of every permutation hop order, start and
activity pattern of two sources, each realisation judged by that closed form; and the per-transmission
truncation (harm below 1e-3 is 0, DEVELOPERS.md) is applied to the enumeration as documented.
"""

import itertools
import math

import numpy as np
import pytest
from scipy.stats import ncx2

from cohop.assess import assess_hop_sets
from cohop.physics import capture
from cohop.prepare import prepare_site
from tests import sites

STEPPED = [{"offset_hz": 1e6, "rejection_db": 6.0}, {"offset_hz": 2e6, "rejection_db": 14.0},
           {"offset_hz": 3e6, "rejection_db": 25.0}]


def _rejection(d: int) -> float:
    return ([0.0] + [r["rejection_db"] for r in STEPPED])[min(d, 3)]


def _site(k_db: float, margin_db: float, sources):
    """Victim 'v' (Rician K, steady links) on channels [1, 2, 5]; sources (id, hops, dwell_s, activity, loss_db),
    packets as long as their dwell, the victim's packet 25 ms."""
    victim = sites.system("v", [1, 2, 5], packet_airtime_s=0.025, dwell_s=0.1, rejection=STEPPED,
                          fading={"model": "rician", "k_factor_db": k_db}, fade_margin_db=margin_db)
    systems = [victim] + [sites.system(sid, hops, packet_airtime_s=dwell, dwell_s=dwell, activity_fraction=act,
                                       rejection=STEPPED) for sid, hops, dwell, act, _ in sources]
    body = sites.site(systems, coupling_loss_db=None, n_channels=12)
    ids = [s[0] for s in sources]
    body["coupling"] = {"entries": [{"from_system": sid, "to_system": "v", "loss_db": loss}
                                    for sid, _, _, _, loss in sources]
                        + [{"from_system": "v", "to_system": sid, "loss_db": 200.0} for sid in ids]
                        + [{"from_system": p, "to_system": q, "loss_db": 200.0} for p in ids for q in ids if p != q]}
    return prepare_site(sites.load(body))


def _source_powers(prep, a: int, victim_channel: int, k_db: float, margin_db: float) -> list[tuple[float, float]]:
    """(summed excess power x, probability) of source a's overlapped transmissions on one hop of the victim:
    every permutation order, start, overlap count and activity pattern (K consecutive dwells, wrapping)."""
    link = prep.links[0][a]
    hops, alpha = list(prep.site.systems[a].hop_set), prep.site.systems[a].activity_fraction
    k, m = 10 ** (k_db / 10), 10 ** (-margin_db / 10)
    base = ncx2.sf(2 * (k + 1) * m, 2, 2 * k)

    def x_at(ch):
        x = 10 ** ((link.excess_db - _rejection(abs(ch - victim_channel))) / 10)
        rho = 1 - ncx2.sf(2 * (k + 1) * (m + x), 2, 2 * k) / base
        return x if rho >= capture.HARM_FLOOR else 0.0  # the documented truncation

    out: dict[float, float] = {}
    orders = list(itertools.permutations(hops))
    for count, p_count in link.overlap.probabilities().items():
        for order in orders:
            for start in range(len(order)):
                xs = [x_at(order[(start + j) % len(order)]) for j in range(count)]
                for pattern in itertools.product([0, 1], repeat=count):
                    p = p_count / (len(orders) * len(order)) * math.prod(alpha if on else 1 - alpha for on in pattern)
                    total = round(sum(x for x, on in zip(xs, pattern) if on), 12)
                    out[total] = out.get(total, 0.0) + p
    return list(out.items())


@pytest.mark.parametrize("k_db,margin_db,losses", [(6.0, 12.0, (68.0, 72.0)), (3.0, 20.0, (63.0, 75.0)),
                                                    (12.0, 8.0, (70.0, 70.0))])
def test_two_hopping_sources_against_enumeration(k_db, margin_db, losses):
    sources = [("a", [0, 1, 3, 4], 0.01, 0.7, losses[0]), ("b", [2, 5, 6], 0.005, 0.4, losses[1])]
    prep = _site(k_db, margin_db, sources)
    sets = [np.array([1, 2, 5]), np.array([0, 1, 3, 4]), np.array([2, 5, 6])]
    figures = assess_hop_sets(prep, sets, ["request"] * 3, detail="source").systems[0]
    assert figures.capture.combination == "joint"
    k, m = 10 ** (k_db / 10), 10 ** (-margin_db / 10)
    base = ncx2.sf(2 * (k + 1) * m, 2, 2 * k)
    for i, c in enumerate(sets[0]):
        pa = _source_powers(prep, 1, int(c), k_db, margin_db)
        pb = _source_powers(prep, 2, int(c), k_db, margin_db)
        xa, wa = np.array(pa).T
        xb, wb = np.array(pb).T
        joint = 1 - (np.outer(wa, wb) * ncx2.sf(2 * (k + 1) * (m + xa[:, None] + xb[None, :]), 2, 2 * k)).sum() / base
        alone_a = 1 - (wa * ncx2.sf(2 * (k + 1) * (m + xa), 2, 2 * k)).sum() / base
        channel = figures.channels[i]
        assert channel.collision_probability == pytest.approx(joint, rel=1e-7, abs=1e-10)
        assert channel.by_source.get("a", 0.0) == pytest.approx(alone_a, rel=1e-7, abs=1e-10)
        # the product of the standalone figures understates the joint one (log-concave Rician survival)
        product = 1 - (1 - channel.by_source.get("a", 0.0)) * (1 - channel.by_source.get("b", 0.0))
        assert channel.collision_probability >= product - 1e-12


def test_rayleigh_victims_keep_the_product():
    # Linnartz 1993 / Kahlon et al. 2012: with a Rayleigh-faded wanted signal the product is exact
    prep = _site(6.0, 12.0, [("a", [0, 1, 3, 4], 0.01, 0.7, 68.0), ("b", [2, 5, 6], 0.005, 0.4, 72.0)])
    body_site = prep.site
    from dataclasses import replace
    victim = replace(body_site.systems[0], fading=replace(body_site.systems[0].fading, model="rayleigh",
                                                          k_factor_db=None))
    prep2 = prepare_site(replace(body_site, systems=(victim,) + tuple(body_site.systems[1:])))
    sets = [np.array([1, 2, 5]), np.array([0, 1, 3, 4]), np.array([2, 5, 6])]
    f = assess_hop_sets(prep2, sets, ["request"] * 3, detail="source").systems[0]
    assert f.capture.combination == "product"
    for ch in f.channels:
        product = 1 - math.prod(1 - p for p in ch.by_source.values())
        assert ch.collision_probability == pytest.approx(product, rel=1e-12)


def test_a_nearly_steady_signal_keeps_the_product_and_says_so():
    # K = 25 dB needs more than JOINT_MAX_TERMS terms of the series (P(N_K > D) < 1e-12, D ~ 2 K)
    assert capture.joint_terms(25.0) > capture.JOINT_MAX_TERMS
    prep = _site(25.0, 12.0, [("a", [0, 1, 3, 4], 0.01, 0.7, 68.0)])
    f = assess_hop_sets(prep, [np.array([1, 2, 5]), np.array([0, 1, 3, 4])], ["request"] * 2).systems[0]
    assert f.capture.combination == "product"


def test_both_evaluation_paths_agree_under_the_joint_law(monkeypatch):
    # the per-step path (many cells) and the offset-by-offset path give the same joint figures
    from cohop import assess
    prep = _site(6.0, 12.0, [("a", [0, 1, 3, 4], 0.01, 0.7, 68.0), ("b", [2, 5, 6], 0.005, 0.4, 72.0)])
    sets = [np.array([1, 2, 5]), np.array([0, 1, 3, 4]), np.array([2, 5, 6])]
    gathered = assess_hop_sets(prep, sets, ["request"] * 3, detail="source").systems[0]
    monkeypatch.setattr(assess, "_CHUNK_CELLS", 1)
    stepped = assess_hop_sets(prep, sets, ["request"] * 3, detail="source").systems[0]
    for a, b in zip(gathered.channels, stepped.channels):
        assert a.collision_probability == pytest.approx(b.collision_probability, rel=1e-12)
        assert a.by_source == pytest.approx(b.by_source, rel=1e-12)
