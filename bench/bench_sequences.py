"""Benchmark: sequence generation, analysis, exact aligned hits and the sequence-driven Monte Carlo.

Targets: generation for the large site (50 systems, 1040 channels) under 1 s; the whole sequence work of
a 1 s plan on it (one construction, analysis at 8 offsets, three simulations of 200 packets) well under
the 0.25 s share the planner gives it. Prints figures, with the baseline of the same run being a plain
Python construction of the same one-coincidence orders (no numpy, no spacing repair), and the bounded
cases of the hostile corpus (coprime periods at the cap, 0.1 ms dwells beside 10 s ones).
"""

from __future__ import annotations

import time

import _common  # noqa: F401
from _common import machine, median_time

import numpy as np

from bench import sitegen
from cohop.site_rules import load_site
from cohop.prepare import prepare_site
from cohop.sequences.analysis import aligned_channel_hits, analyse
from cohop.sequences.construct import build_sequences
from cohop.sequences.simulate import simulate_all, simulate_retries


def plain_python_orders(hop_sets, p_of) -> list[list[int]]:
    """The family orders without repair, in plain Python: a floor for what construction costs."""
    out = []
    for i, hs in enumerate(hop_sets):
        p = p_of(len(hs))
        mine = set(range(len(hs)))
        a = 1 + i % (p - 1)
        out.append([hs[a * t % p] for t in range(p) if a * t % p in mine])
    return out


def main() -> None:
    from cohop.stats.hopping import prime_at_least

    print(f"machine: {machine()}")
    site = load_site(sitegen.generate("large", seed=1))
    prep = prepare_site(site)
    hop_sets = [np.array(s.hop_set) for s in site.systems]
    t_build = median_time(lambda: build_sequences(prep, hop_sets, seed=1), 5)
    t_plain = median_time(lambda: plain_python_orders([list(h) for h in hop_sets], prime_at_least), 5)
    seqs, _ = build_sequences(prep, hop_sets, seed=1)
    print(f"large site ({len(site.systems)} systems x {site.grid.count} channels): generation {t_build * 1e3:.1f} ms "
          f"(target < 1000 ms); plain-Python family orders without spacing repair {t_plain * 1e3:.1f} ms")
    t_tiny = median_time(lambda: build_sequences(prep, hop_sets, seed=1, rms_delay_spread_s=1e-15), 3)
    print(f"  generation when no order can keep the spacing asked for (delay spread 1e-15 s): {t_tiny * 1e3:.1f} ms")
    for phases in (8, 128):
        t = time.perf_counter()
        report = analyse(prep, seqs, 100e-9, run_phases=phases)
        print(f"  analysis at {phases:3d} offsets of {len(report.pairs)} of {50 * 49} ordered pairs (the others cannot "
              f"meet): {time.perf_counter() - t:.3f} s")
    orders = [s.channels for s in seqs]
    for packets in (200, 1000):
        t_sim = median_time(lambda: simulate_all(prep, orders, packets, 1, 100e-9, report.reach), 3)
        print(f"  retry simulation of all 50 systems, {packets} packets each: {t_sim:.3f} s (three runs per plan)")
    one_second_plan = (median_time(lambda: build_sequences(prep, hop_sets, seed=1), 3)
                       + median_time(lambda: analyse(prep, seqs, 100e-9, run_phases=8), 3)
                       + 3 * median_time(lambda: simulate_all(prep, orders, 200, 1, 100e-9, report.reach), 3))
    print(f"  the sequence work of a 1 s plan (build, 8 offsets, 3 x 200 packets): {one_second_plan:.3f} s "
          f"(share 0.25 s)")
    x, y = seqs[0].channels, seqs[1].channels
    t_al = median_time(lambda: aligned_channel_hits(prep, 0, 1, x, y, x), 20)
    print(f"  exact aligned hits for one pair over a {np.lcm(x.size, y.size)}-hop common period: {t_al * 1e3:.2f} ms")
    packets = 20_000
    t = time.perf_counter()
    simulate_retries(prep, [s.channels for s in seqs], 0, packets, 1, 100e-9)
    dt = time.perf_counter() - t
    attempts = packets * (site.systems[0].retry_limit + 1) * site.systems[0].hops_per_attempt
    print(f"  sequence-driven Monte Carlo, one victim against {len(site.systems) - 1} systems and "
          f"{len(site.interferers)} interferers: {packets} packets ({attempts} hops) in {dt:.2f} s = "
          f"{attempts / dt / 1e6:.2f} M hops/s")
    hostile_shapes()
    order_costs()


def hostile_shapes() -> None:
    """The corpus' bounded cases, the sequence part alone."""
    from cohop.sequences.analysis import longest_runs
    from cohop.stats.hopping import coincidences_over_common_period
    from tests import sites

    x, y = np.arange(8191), np.arange(8192)
    t = median_time(lambda: coincidences_over_common_period(x, y), 5)
    print(f"coincidences of 8191- and 8192-hop orders at every shift of their {8191 * 8192}-hop common period: "
          f"{t * 1e3:.1f} ms")
    order = np.arange(79)
    body = sites.site([sites.system("v", range(79), dwell_s=1e-4, packet_airtime_s=1e-4),
                       sites.system("a", range(79), dwell_s=10.0, packet_airtime_s=1e-3)], n_channels=79)
    prep = prepare_site(sites.load(body))
    t = median_time(lambda: longest_runs(prep, [(0, 1), (1, 0)], {0: order, 1: order}), 5)
    print(f"longest runs of 0.1 ms dwells beside 10 s ones (horizon cut at 4096 hops): {t * 1e3:.1f} ms")


def order_costs(packets: int = 20_000) -> None:
    """Residual loss after retries on the medium site: our orders against two poor ones, for the site's
    own (random) hop sets and for interleaved hop sets (neighbours side by side, where moving in step hurts)."""
    from cohop.planning.baselines import interleaved
    from cohop.planning.instance import build_instance
    from cohop.planning.requirements import PlanRequirements, SystemRequirement
    from cohop.sequences.report import common_pattern

    site = load_site(sitegen.generate("medium", seed=1))
    prep = prepare_site(site)
    req = PlanRequirements(systems=tuple(SystemRequirement(s.id, min_channels=50, max_channels=50)
                                         for s in site.systems))
    hop_set_choices = {"random hop sets": [np.array(s.hop_set) for s in site.systems],
                       "interleaved hop sets": interleaved(build_instance(prep, req))}
    print(f"medium site ({len(site.systems)} systems): residual loss after retries, {packets} packets per system")
    for label, hop_sets in hop_set_choices.items():
        seqs, _ = build_sequences(prep, hop_sets, seed=1)
        orders = [s.channels for s in seqs]
        variants = {"our orders": orders, "ascending": [np.sort(o) for o in orders],
                    "common pattern": common_pattern(orders)}
        for name, variant in variants.items():
            res = np.array([simulate_retries(prep, variant, v, packets, 1, 100e-9).residual_loss
                            for v in range(prep.n_systems)])
            print(f"  {label:21s} {name:15s} mean {res.mean():.2e}, worst {res.max():.2e}")


if __name__ == "__main__":
    main()
